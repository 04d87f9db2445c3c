"""The tests' own helpers: servers, clients, pictures, bearings and phone steps that test
files share. Nothing here is a test, and nothing here is imported by the app.

The rule (DEVELOPERS.md, "Tests"): under tests/ a Python file is a test file
(``test_*.py``), a ``conftest.py`` of fixtures, or a helper module in this package,
imported as ``kit.<name>``. tests/test_kit.py holds the tree to it.
"""
