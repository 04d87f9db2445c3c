"""What each value of a site's code basis and review settings is called, with its unit: the
words of the settings page, which the site record (PDF) prints too, so the quality file
reads as the screens do. Plain data, no Flask: the web forms and the report both import it.

``tests/test_site_record_pdf.py`` holds every field of the code basis and of the review
settings to a label here, so a new value cannot reach the record under its internal name.
"""

from __future__ import annotations

# Scalars of the code basis: name → (label, unit).
BASIS_LABELS: dict[str, tuple[str, str]] = {
    "gamma_c": ("Partial factor for concrete γ_c", ""),
    "alpha_cc": ("Long-term coefficient α_cc", ""),
    "alpha_cc_pl": ("Long-term coefficient for plain concrete α_cc,pl", ""),
    "plb_limit_factor": ("Limit on F_Rdu / (A_c0 f_cd)", ""),
    "padstone_spread_deg": ("Spread through the padstone", "°"),
    "f_b_max": ("Greatest normalised unit strength f_b", "N/mm²"),
    "f_m_max": ("Greatest mortar strength f_m", "N/mm²"),
    "collar_joint_factor": ("Factor on K for a wall with a collar joint", ""),
    "masonry_spread_deg": ("Spread through the masonry", "°"),
    "beta_area_ratio_cap": ("Cap on A_b / A_ef for β", ""),
    "spreader_min_depth": ("Spreader: least depth", "mm"),
    "spreader_length_factor": ("Spreader: least length, × bearing length", ""),
    "spreader_stress_factor": ("Spreader: stress limit, × f_d", ""),
    "max_eccentricity_ratio": ("Greatest eccentricity across the wall, × t", ""),
    "k_E": ("Modulus of elasticity, × f_k", ""),
    "e_mk_min_ratio": ("Least mid-height eccentricity e_mk, × t", ""),
    "e_init_divisor": ("Initial eccentricity e_init = h_ef / …", ""),
    "dispersion_depth_ratio": ("Depth of the dispersion check, × h", ""),
    "bs_min_eccentricity_ratio": ("Least eccentricity e_x, × t", ""),
    "slenderness_limit": ("Greatest slenderness h_ef / t_ef", ""),
    "min_bearing_beam": ("Least bearing of a steel beam", "mm"),
    "min_bearing_lintel": ("Least end bearing of a lintel", "mm"),
    "inline_flange_allowance": ("In line: flange may exceed t by", "mm"),
    "inline_padstone_min_length": ("In line: least padstone length", "mm"),
    "inline_web_tolerance": ("In line: web within, of the wall's centre line", "mm"),
}

# The code basis's yes/no values, with their question; shown as ticks in their group.
BASIS_FLAGS: dict[str, str] = {
    "spreader_route_for_groups_2_to_4": "Allow the spreader route for Groups 2 to 4",
    "plain_partial_area_enhancement": (
        "Allow the partially loaded area enhancement √(A_c1/A_c0) for plain padstones"
    ),
}

# The settings page's groups, scalars and yes/no values together, in its order.
BASIS_GROUPS = (
    (
        "Concrete padstone (EN 1992-1-1)",
        (
            "gamma_c",
            "alpha_cc",
            "alpha_cc_pl",
            "plain_partial_area_enhancement",
            "plb_limit_factor",
            "padstone_spread_deg",
        ),
    ),
    ("Masonry strength (EC6)", ("f_b_max", "f_m_max", "collar_joint_factor")),
    (
        "Concentrated loads (EC6 6.1.3)",
        (
            "masonry_spread_deg",
            "beta_area_ratio_cap",
            "spreader_min_depth",
            "spreader_length_factor",
            "spreader_stress_factor",
            "spreader_route_for_groups_2_to_4",
            "max_eccentricity_ratio",
        ),
    ),
    ("Mid-height (EC6 6.1.2 and Annex G)", ("k_E", "e_mk_min_ratio", "e_init_divisor")),
    ("Local bearing (BS 5628-1)", ("dispersion_depth_ratio", "bs_min_eccentricity_ratio")),
    ("Both code bases", ("slenderness_limit",)),
    (
        "Rules of the trade",
        (
            "min_bearing_beam",
            "min_bearing_lintel",
            "inline_flange_allowance",
            "inline_padstone_min_length",
            "inline_web_tolerance",
        ),
    ),
)

# The creep tables of EC6 6.1.2.2, one row per unit material: name → heading.
CREEP_TABLES = (
    ("creep_lambda_c", "λ_c, slenderness up to which e_k = 0"),
    ("creep_phi_inf", "Final creep coefficient φ_∞"),
)

# Tables of the code basis: name → heading, as the settings page's legends say them.
TABLE_TITLES = {
    "k_values": "K for f_k = K f_b^0.7 f_m^0.3 (EC6)",
    "gamma_M_ec6": "Partial factor γ_M for masonry (EC6)",
    "gamma_m_bs": "Partial factor γ_m for material (BS 5628-1)",
    # Both creep tables (CREEP_TABLES) under one heading, a column each.
    "creep_lambda_c": "Creep eccentricity e_k at mid-height (EC6 6.1.2.2)",
    "bearing_type_factors": "Local bearing factors by bearing type (BS 5628-1)",
}
K_MORTARS = ("general", "thin-layer")
GAMMA_M_EC6_ROWS = (
    ("1|I", "Execution class 1, category I"),
    ("1|II", "Execution class 1, category II"),
    ("2|I", "Execution class 2, category I"),
    ("2|II", "Execution class 2, category II"),
)
GAMMA_M_BS_ROWS = (
    ("special|special", "Manufacturing special, construction special"),
    ("special|normal", "Manufacturing special, construction normal"),
    ("normal|special", "Manufacturing normal, construction special"),
    ("normal|normal", "Manufacturing normal, construction normal"),
)

# Review settings: name → (label, unit, where the default comes from).
REVIEW_LABELS: dict[str, tuple[str, str, str]] = {
    "threshold": ("Utilisation above which the engineer looks", "", "[ours]"),
    "rise_margin": ("Allowed rise of utilisation over the design's", "", "[ours]"),
    "tol_bearing_length": ("Tolerance on bearing length", "mm", "[ours]"),
    "tol_flange_width": ("Tolerance on flange width", "mm", "[ours]"),
    "tol_padstone": ("Tolerance on padstone sizes", "mm", "[ours]"),
    "tol_wall_thickness": ("Tolerance on wall thickness", "mm", "±5 mm or ±5 %, EN 1996-2 [M]"),
    "tol_wall_thickness_ratio": (
        "Tolerance on wall thickness, × t",
        "",
        "±5 mm or ±5 %, EN 1996-2 [M]",
    ),
    "tol_end_distance": ("Tolerance on a1 and a2", "mm", "[ours]"),
    "tol_position": ("Tolerance on the beam's position", "mm", "[ours]"),
    "max_packing": ("Greatest packing under the beam", "mm", "[ours]"),
}
# The review settings that are lists of what the inspector must measure.
REQUIRED_LABELS = {
    "required": "Values the inspector must measure",
    "required_with_padstone": "…and, where there is a padstone",
}

# The source labels at the end of a source, and the words the screens show for them.
SOURCE_TAGS = (
    ("[M]", "from memory: confirm against the standard before relying on it"),
    ("[P]", "partly seen in a published source"),
    ("[S]", "seen in a published source"),
    ("[CP]", "common practice"),
    ("[ours", "a choice of this tool"),
)


def source_tag(text: str) -> tuple[str, str] | None:
    """The source label at the end of a SOURCES entry, with the words the screen shows."""
    for tag, words in SOURCE_TAGS:
        if tag in text:
            return tag.strip("[]"), words
    return None
