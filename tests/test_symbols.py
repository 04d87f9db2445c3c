"""Every symbol the calculation trace writes has plain words to stand beside it on the
inspector's and contractor's screens (sitecheck/web/symbols.py): the glossary's, or the
label of the step that works it out. Read from every check and review case of the shared
vectors, so a symbol new to the core fails here until it has words."""

from __future__ import annotations

from kit.mirror_compare import load_shared_vectors
from sitecheck.web.symbols import SYMBOL_WORDS, words_for


def _results(vectors: dict):
    for case in vectors["check"]:
        if case["expect"].get("result"):
            yield case["expect"]["result"]
    for case in vectors["review"]:
        for key in ("design_result", "result"):
            if case["expect"].get(key):
                yield case["expect"][key]


def test_every_symbol_in_the_trace_has_plain_words():
    vectors = load_shared_vectors()
    seen: set[str] = set()
    without: set[str] = set()
    for result in _results(vectors):
        for steps in [result["strengths"]["steps"], *(c["steps"] for c in result["checks"])]:
            for step in steps:
                for symbol in [step["symbol"], *(i[0] for i in step["inputs"])]:
                    seen.add(symbol)
                    if not words_for(symbol, steps):
                        without.add(symbol)
    assert len(seen) > 60, "the vectors should hold most of the core's symbols"
    assert not without, f"symbols with no plain words: {sorted(without)}"


def test_the_glossary_has_no_empty_words():
    assert all(words.strip() == words and words for words in SYMBOL_WORDS.values())
