"""Tools for developers of sitecheck: not part of the installed package."""
