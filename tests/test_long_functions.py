"""A function longer than 80 lines is split, or says just above it why it is one piece
(``# One piece: ...``). The whole package is held to it."""

from __future__ import annotations

from devtools.long_functions import ROOT, long_functions


def test_the_finder_sees_a_long_function_and_its_reason(tmp_path):
    body = "\n".join(f"    x{i} = {i}" for i in range(85))
    (tmp_path / "long.py").write_text(
        f"def plain():\n{body}\n\n\n# One piece: a reason.\ndef explained():\n{body}\n",
        encoding="utf-8",
    )
    found = {
        where.rsplit(" ", 1)[1]: explained
        for _n, where, explained in long_functions([tmp_path], root=tmp_path)
    }
    assert found == {"plain": False, "explained": True}


def test_every_long_function_is_split_or_says_why_it_is_one_piece():
    unexplained = [
        f"{where} ({length} lines)"
        for length, where, explained in long_functions([ROOT / "sitecheck"])
        if not explained
    ]
    assert unexplained == []
