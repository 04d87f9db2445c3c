"""Plain words for the symbols of the calculation trace.

The trace names each value by its symbol (N_Ed, l_efm, σ_max, f_k), as the standards do. On
an inspector's or contractor's screen a symbol never stands alone: each is shown beside the
words below (or, for a step's own result, beside the step's label). The words are ours,
for reading on site; the symbols and clauses stay the core's.

The phone gets the same table (the as-built form's context and the offline page), so a
trace worked out with no signal reads the same. ``tests/test_symbols.py`` holds it complete
for every symbol the core writes in the shared vectors.
"""

from __future__ import annotations

SYMBOL_WORDS: dict[str, str] = {
    # loads
    "N_Ed": "end reaction",
    "N": "load on the masonry",
    "n_Ed": "load per length",
    "n": "load per length",
    "q": "other load on the wall",
    # the beam and its bearing
    "b_f": "flange width",
    "l_b": "bearing length",
    "l_b,min": "least bearing length",
    "footprint": "flange footprint",
    "x_reaction": "where the reaction acts",
    "e_y": "web off the wall's centre line",
    "b_max": "widest flange allowed",
    # the padstone
    "L_p": "padstone length",
    "L_min": "shortest padstone allowed",
    "h_p": "padstone depth",
    "h": "padstone depth",
    "b_1": "padstone width used",
    "d_1": "padstone length used",
    "room along": "room along the padstone",
    "room across": "room across the padstone",
    "A_c0": "loaded area",
    "A_c1": "distribution area",
    "k": "scale of the distribution area",
    "F_Rdu": "padstone's resistance",
    "f_ck": "concrete strength",
    "f_cd": "concrete design strength",
    "f_cd,pl": "design strength of plain concrete",
    "α_cc": "concrete long-term factor",
    "α_cc,pl": "long-term factor for plain concrete",
    "allowed by the code basis": "whether the site allows it",
    "γ_c": "partial factor for concrete",
    "s": "spread each side",
    "s_60": "spread needed each side",
    "x_0": "spread available at the first end",
    "L_p − x_1": "spread available at the other end",
    # the loaded area on the masonry
    "L_w": "loaded length",
    "W": "loaded width",
    "support length": "length of the support",
    "support width": "width of the support",
    "contact": "contact length",
    "loaded length": "length carrying the load",
    "whole-window reading": "with the whole loaded window",
    "contact-length reading": "with the contact length only",
    "e": "eccentricity along the loaded length",
    "σ_max": "peak pressure",
    "A_b": "loaded area on the masonry",
    "A_ef": "effective wall area",
    "A_b/A_ef": "area ratio",
    "uncapped": "value before its cap",
    "upper": "upper limit",
    "factor": "factor",
    "tolerance": "tolerance",
    # the wall
    "t": "wall thickness",
    "t_ef": "effective thickness",
    "h_c": "height from the wall's base to the padstone's underside",
    "h_ef": "effective height",
    "h_ef/t_ef": "slenderness ratio",
    "a1": "distance to the wall's end",
    "a2": "distance to the wall's other end",
    "l_efm": "effective length at mid-height",
    "limit t/4": "limit of a quarter of the wall thickness",
    "0.4 h": "depth of the check below the bearing",
    "l_d": "length the load has spread over",
    "e_mk": "eccentricity at mid-height",
    "e_m": "eccentricity from the load",
    "e_a": "eccentricity from building tolerances",
    "e_k": "creep eccentricity",
    "λ_c": "slenderness up to which creep is left out",
    "φ_∞": "final creep coefficient",
    "e_x": "eccentricity at the top of the wall",
    "λ": "slenderness parameter",
    "Φ_m": "reduction factor at mid-height",
    "A1": "factor",
    "u": "factor",
    "n_Rd": "resistance per length",
    "β": "enhancement factor",
    "β · f_d": "design strength under the load",
    "1.5 · f_d": "design strength under the load",
    "N_Rdc": "resistance to the concentrated load",
    "k · f_k/γ_m": "local design bearing strength",
    "β t f_k/γ_m": "resistance per length",
    # the masonry
    "f_b": "normalised unit strength",
    "f_u": "unit strength",
    "unit strength": "unit strength",
    "mortar": "mortar class",
    "f_m": "mortar strength",
    "K": "constant for the unit and mortar",
    "f_k": "characteristic strength",
    "f_d": "design strength",
    "γ_M": "partial factor for masonry",
    "γ_m": "partial factor for masonry",
    "δ": "unit shape factor",
    "height": "unit height",
    "width": "unit width",
    "unit width": "unit width",
    "joint": "how the collar joint is known",
    "k_joint": "factor for a collar joint",
    "f_k/γ_m": "design strength",
    "c": "factor",
}

# The symbols the bearing drawing writes on itself (sitecheck/report/drawing.py), in words:
# the drawing keeps its short labels to fit, and the page puts this key beside it.
DRAWING_KEY: tuple[tuple[str, str], ...] = (
    ("N_Ed", "end reaction"),
    ("l_b", "bearing length"),
    ("a1", "distance to the wall's end"),
    ("t", "wall thickness"),
    ("e", "eccentricity across the wall, against its limit of a quarter of t"),
    ("σ_max", "peak pressure under the padstone"),
    ("l_efm / l_d", "length the load has spread over, at mid-height (EC6) or 0.4 h (BS 5628-1)"),
    ("h_c", "height from the wall's base to the padstone's underside"),
)


def words_for(symbol: str, steps: list[dict] | None = None) -> str:
    """The plain words beside ``symbol``: the glossary's, else the label of the step that
    works it out, else nothing (a symbol new to the core; the test above catches it)."""
    if symbol in SYMBOL_WORDS:
        return SYMBOL_WORDS[symbol]
    for step in steps or ():
        if step.get("symbol") == symbol:
            return str(step.get("label") or "").lower()
    return ""
