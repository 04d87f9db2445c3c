"""A site's settings: its code basis and its review settings, as a form built from the
core's fields and bounds, and back."""

from __future__ import annotations

from dataclasses import fields

from flask_wtf import FlaskForm
from wtforms import (
    BooleanField,
    StringField,
)
from wtforms.validators import DataRequired, Length, Optional

from sitecheck.bearing import (
    SOURCES,
    CodeBasis,
    basis_named,
)
from sitecheck.bearing.basis import SCALAR_BOUNDS, TABLE_BOUNDS
from sitecheck.bearing.inputs import (
    MATERIALS,
)
from sitecheck.bearing.review import ReviewSettings
from sitecheck.settings_words import (
    BASIS_FLAGS,
    BASIS_LABELS,
    CREEP_TABLES,
    GAMMA_M_BS_ROWS,
    GAMMA_M_EC6_ROWS,
    K_MORTARS,
    REVIEW_LABELS,
    source_tag,
)
from sitecheck.web.form_fields import (
    error_count,
    number_field,
    parse_number,
    plain_number,
)

# --- site settings: the code basis and the review settings -------------------------------------

# The words are the settings page's and the site record's (sitecheck.settings_words); the
# bounds are the core's (sitecheck.bearing.basis.SCALAR_BOUNDS), so a value the form takes
# the core takes too.
BASIS_SCALARS: dict[str, tuple[str, str, float, float]] = {
    name: (label, unit, *SCALAR_BOUNDS[name]) for name, (label, unit) in BASIS_LABELS.items()
}


def creep_field_name(table: str, material: str) -> str:
    return f"{table}_{_slug(material)}"


K_BOUNDS = TABLE_BOUNDS["k_values"]
GAMMA_BOUNDS = TABLE_BOUNDS["gamma_M_ec6"]
BEARING_TYPE_BOUNDS = TABLE_BOUNDS["bearing_type_factors"]

# Plausibility bounds of ours on the review settings, to catch a slip, not code limits.
_REVIEW_BOUNDS = {
    "threshold": (0.1, 1.0),
    "rise_margin": (0.0, 1.0),
    "tol_bearing_length": (0.0, 100.0),
    "tol_flange_width": (0.0, 100.0),
    "tol_padstone": (0.0, 100.0),
    "tol_wall_thickness": (0.0, 100.0),
    "tol_wall_thickness_ratio": (0.0, 0.5),
    "tol_end_distance": (0.0, 500.0),
    "tol_position": (0.0, 200.0),
    "max_packing": (0.0, 100.0),
}
REVIEW_FIELDS: dict[str, tuple[str, str, float, float, str]] = {
    name: (label, unit, *_REVIEW_BOUNDS[name], source)
    for name, (label, unit, source) in REVIEW_LABELS.items()
}


def _slug(text: str) -> str:
    return "".join(c if c.isalnum() else "_" for c in text)


def k_field_name(material: str, group: int, mortar_kind: str) -> str:
    return f"k_{_slug(material)}_{group}_{_slug(mortar_kind)}"


def k_key(material: str, group: int, mortar_kind: str) -> str:
    return f"{material}|{group}|{mortar_kind}"


def gamma_field_name(table: str, key: str) -> str:
    return f"{table}_{_slug(key)}"


K_ROWS = tuple((m, g) for m in MATERIALS for g in (1, 2, 3, 4))


def _build_settings_form() -> type[FlaskForm]:
    attrs = {
        "name": StringField(
            "Site name", validators=[DataRequired("Give the site a name."), Length(max=120)]
        ),
        "address": StringField("Address", validators=[Optional(), Length(max=300)]),
        **{name: BooleanField(label) for name, label in BASIS_FLAGS.items()},
    }
    for name, (label, unit, _lo, _hi) in BASIS_SCALARS.items():
        attrs[name] = number_field(label + (f" ({unit})" if unit else ""))
    for material, group in K_ROWS:
        for kind in K_MORTARS:
            attrs[k_field_name(material, group, kind)] = number_field(
                f"K, {material}, Group {group}, {kind} mortar"
            )
    for key, label in GAMMA_M_EC6_ROWS:
        attrs[gamma_field_name("gamma_M_ec6", key)] = number_field(f"γ_M, {label}")
    for key, label in GAMMA_M_BS_ROWS:
        attrs[gamma_field_name("gamma_m_bs", key)] = number_field(f"γ_m, {label}")
    for i in (1, 2, 3):
        attrs[f"bearing_type_factor_{i}"] = number_field(f"Bearing type {i} factor")
    for table, words in CREEP_TABLES:
        for material in MATERIALS:
            attrs[creep_field_name(table, material)] = number_field(f"{words}, {material}")
    for name, (label, unit, *_rest) in REVIEW_FIELDS.items():
        attrs[name] = number_field(label + (f" ({unit})" if unit else ""))
    return type("SettingsForm", (FlaskForm,), attrs)


SettingsForm = _build_settings_form()


def settings_form_data(site: dict, basis: CodeBasis, review: ReviewSettings) -> dict:
    data = {"name": site["name"], "address": site.get("address") or ""}
    for name in BASIS_SCALARS:
        data[name] = plain_number(getattr(basis, name))
    for name in BASIS_FLAGS:
        data[name] = bool(getattr(basis, name))
    for material, group in K_ROWS:
        for kind in K_MORTARS:
            data[k_field_name(material, group, kind)] = plain_number(
                basis.k_value(material, group, kind)
            )
    ec6 = dict(basis.gamma_M_ec6)
    for key, _label in GAMMA_M_EC6_ROWS:
        data[gamma_field_name("gamma_M_ec6", key)] = plain_number(ec6.get(key))
    bs = dict(basis.gamma_m_bs)
    for key, _label in GAMMA_M_BS_ROWS:
        data[gamma_field_name("gamma_m_bs", key)] = plain_number(bs.get(key))
    for i, v in enumerate(basis.bearing_type_factors, start=1):
        data[f"bearing_type_factor_{i}"] = plain_number(v)
    for table, _words in CREEP_TABLES:
        values = dict(getattr(basis, table))
        for material in MATERIALS:
            data[creep_field_name(table, material)] = plain_number(values.get(material))
    for name in REVIEW_FIELDS:
        data[name] = plain_number(getattr(review, name))
    return data


def _bounded(field, least: float, greatest: float, unit: str, required: bool = True):
    return parse_number(
        field, unit, required=required, what="a value", least=least, greatest=greatest
    )


def settings_from_form(form, basis: CodeBasis, review: ReviewSettings) -> tuple[dict, dict] | None:
    """The code basis and review settings as stored (``CodeBasis.to_dict`` and
    ``ReviewSettings.as_dict`` shapes), or None with each problem on its field."""
    before = error_count(form)
    code = basis.to_dict()  # keeps the basis's name and anything this form does not show
    for name, (_label, unit, lo, hi) in BASIS_SCALARS.items():
        code[name] = _bounded(form[name], lo, hi, unit)
    for name in BASIS_FLAGS:
        code[name] = bool(form[name].data)
    k_values = {}
    for material, group in K_ROWS:
        for kind in K_MORTARS:
            # An empty K cell means the table gives no value: the check then refuses
            # such masonry rather than guess.
            value = _bounded(form[k_field_name(material, group, kind)], *K_BOUNDS, "", False)
            if value is not None:
                k_values[k_key(material, group, kind)] = value
    code["k_values"] = k_values
    code["gamma_M_ec6"] = {
        key: _bounded(form[gamma_field_name("gamma_M_ec6", key)], *GAMMA_BOUNDS, "")
        for key, _label in GAMMA_M_EC6_ROWS
    }
    code["gamma_m_bs"] = {
        key: _bounded(form[gamma_field_name("gamma_m_bs", key)], *GAMMA_BOUNDS, "")
        for key, _label in GAMMA_M_BS_ROWS
    }
    code["bearing_type_factors"] = [
        _bounded(form[f"bearing_type_factor_{i}"], *BEARING_TYPE_BOUNDS, "") for i in (1, 2, 3)
    ]
    for table, _words in CREEP_TABLES:
        code[table] = {
            material: _bounded(form[creep_field_name(table, material)], *TABLE_BOUNDS[table], "")
            for material in MATERIALS
        }
    settings = review.as_dict()  # keeps which as-built values are required
    for name, (_label, unit, lo, hi, _source) in REVIEW_FIELDS.items():
        settings[name] = _bounded(form[name], lo, hi, unit)
    if error_count(form) != before:
        return None
    return code, settings


def basis_rows(basis: CodeBasis) -> dict:
    """What the settings page shows beside each value: its default and where that comes
    from, and whether this site has changed it."""
    default = basis_named(basis.name)
    rows = {}
    for f in fields(CodeBasis):
        if f.name == "name":
            continue
        source = SOURCES.get(f.name, "")
        rows[f.name] = {
            "source": source,
            "tag": source_tag(source),
            "changed": getattr(basis, f.name) != getattr(default, f.name),
        }
    return rows
