"""A drawing of one bearing, to scale, as SVG text: an elevation along the wall and a
section across it, with the load's spread and the pressure under the padstone.

Pure: no Flask, no SQL, no files. It draws what the stored design input and the stored
result say (``BearingInput`` and ``BearingResult.as_dict()`` as dicts) and works out no
engineering of its own beyond placing lines; every drawn element carries its model value
in ``data-`` attributes so tests and readers can check the picture against the numbers.

Readable on a phone: the SVG has a viewBox and no fixed size, and every text is
``FONT`` units high in a ``VIEW_W`` wide box, which is 11 px or more on a 320 px wide
screen. Only presentation attributes are used (a strict CSP forbids style attributes) and
only a generic font family (no font files, no scripts).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from xml.sax.saxutils import escape, quoteattr

from sitecheck.bearing.format import number

VIEW_W = 640.0
FONT = 22.0  # × 320 / VIEW_W = 11 px on the narrowest phone we design for
MARGIN = 24.0
PHONE_MIN_PX = 320.0

INK = "#1b1b1b"
WALL_FILL = "#e8e4dc"
JOINT = "#9a958c"
PAD_FILL = "#b9bcbf"
BEAM_FILL = "#4a5a66"
SPREAD = "#1f5fa8"
MASONRY_SPREAD = "#b0451b"
PRESSURE_FILL = "#f2c9a8"
CHANGED = "#a3006b"

# Where the wall's run is cut off when it runs on, beyond the widest line drawn.
RUN_ON = 200.0
OPENING = 160.0  # empty space shown past a wall end (the opening)
BELOW = 150.0  # wall shown below the check depth
PRESSURE_BAND = 90.0  # drawing units for the peak pressure ordinate


def _n(x: float) -> str:
    """A drawing coordinate: short, exact enough, never '-0'."""
    text = f"{x:.2f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def _mm(x: float | None) -> str:
    return "—" if x is None else number(x)


def _attrs(data: dict) -> str:
    out = []
    for key, value in data.items():
        if value is None:
            continue
        name = key.replace("_", "-")
        if isinstance(value, bool):
            value = "true" if value else "false"
        elif isinstance(value, float):
            value = f"{value:.6g}"
        out.append(f" data-{name}={quoteattr(str(value))}")
    return "".join(out)


class _Canvas:
    """SVG elements in drawing units; model lengths in mm go through ``sx``/``sy``."""

    def __init__(self, scale: float, ox: float, oy: float):
        self.scale, self.ox, self.oy = scale, ox, oy
        self.parts: list[str] = []

    def sx(self, x_mm: float) -> float:
        return self.ox + x_mm * self.scale

    def sy(self, z_mm: float) -> float:
        return self.oy + z_mm * self.scale

    def raw(self, text: str) -> None:
        self.parts.append(text)

    def rect(self, x, y, w, h, *, fill, stroke=INK, width=2.0, dash=None, **data) -> None:
        d = f' stroke-dasharray="{dash}"' if dash else ""
        self.parts.append(
            f'<rect x="{_n(x)}" y="{_n(y)}" width="{_n(w)}" height="{_n(h)}" fill="{fill}" '
            f'stroke="{stroke}" stroke-width="{_n(width)}"{d}{_attrs(data)}/>'
        )

    def line(self, x1, y1, x2, y2, *, stroke=INK, width=1.5, dash=None, **data) -> None:
        d = f' stroke-dasharray="{dash}"' if dash else ""
        self.parts.append(
            f'<line x1="{_n(x1)}" y1="{_n(y1)}" x2="{_n(x2)}" y2="{_n(y2)}" stroke="{stroke}" '
            f'stroke-width="{_n(width)}"{d}{_attrs(data)}/>'
        )

    def poly(self, points, *, closed=False, fill="none", stroke=INK, width=2.0, dash=None, **data):
        tag = "polygon" if closed else "polyline"
        pts = " ".join(f"{_n(x)},{_n(y)}" for x, y in points)
        d = f' stroke-dasharray="{dash}"' if dash else ""
        self.parts.append(
            f'<{tag} points="{pts}" fill="{fill}" stroke="{stroke}" '
            f'stroke-width="{_n(width)}"{d}{_attrs(data)}/>'
        )

    def path(self, d: str, *, stroke=JOINT, width=1.0, fill="none", **data) -> None:
        if d:
            self.parts.append(
                f'<path d="{d}" fill="{fill}" stroke="{stroke}" stroke-width="{_n(width)}"'
                f"{_attrs(data)}/>"
            )

    def text(
        self, x, y, words: str, *, anchor="middle", bold=False, fill=INK, rotate=False, **data
    ) -> None:
        weight = ' font-weight="bold"' if bold else ""
        turn = f' transform="rotate(-90 {_n(x)} {_n(y)})"' if rotate else ""
        self.parts.append(
            f'<text x="{_n(x)}" y="{_n(y)}" font-size="{_n(FONT)}" text-anchor="{anchor}" '
            f'fill="{fill}"{weight}{turn}{_attrs(data)}>{escape(words)}</text>'
        )

    def arrow_down(self, x, y_tip, length, *, stroke=INK, **data) -> None:
        self.line(x, y_tip - length, x, y_tip, stroke=stroke, width=3.0, **data)
        self.poly(
            [(x - 7, y_tip - 14), (x + 7, y_tip - 14), (x, y_tip)],
            closed=True,
            fill=stroke,
            stroke=stroke,
            width=1.0,
        )

    def dim_h(self, x0, x1, y, words: str, *, above=True, fill=INK, **data) -> None:
        """A horizontal dimension line with end ticks and its words."""
        self.line(x0, y, x1, y, width=1.2, stroke=fill, **data)
        for x in (x0, x1):
            self.line(x, y - 8, x, y + 8, width=1.2, stroke=fill)
        ty = y - 7 if above else y + FONT + 2
        self.text((x0 + x1) / 2, ty, words, fill=fill)

    def dim_v(self, x, y0, y1, words: str, *, side="right", fill=INK, **data) -> None:
        self.line(x, y0, x, y1, width=1.2, stroke=fill, **data)
        for y in (y0, y1):
            self.line(x - 8, y, x + 8, y, width=1.2, stroke=fill)
        if side == "right":
            self.text(x + 8, (y0 + y1) / 2 + FONT / 3, words, anchor="start", fill=fill)
        else:
            self.text(x - 8, (y0 + y1) / 2 + FONT / 3, words, anchor="end", fill=fill)


def _text_w(words: str) -> float:
    """A safe guess of a text's width in drawing units (no font metrics here)."""
    return 0.58 * FONT * len(words)


@dataclass(frozen=True)
class _Model:
    """The numbers the drawing needs, read once from the stored dicts."""

    reference: str
    ec6: bool
    across: bool
    has_pad: bool
    pad_words: str  # the padstone's concrete: class, and plain or reinforced
    pad_across: str  # where it sits across the wall, when the input says ("" as built in)
    L: float  # support length along
    W: float  # support width across
    d: float  # padstone depth (0: none)
    y0_wall: float
    t: float
    a1: float | None
    a2: float | None
    foot_x0: float
    foot_x1: float
    foot_y0: float
    foot_y1: float
    flange: float
    bearing: float
    rx: float
    ry: float
    win_x0: float
    win_x1: float
    cx0: float
    cx1: float
    sx0: float  # the loaded length the masonry spread starts from (its governing reading)
    sx1: float
    spread_reading: str
    rigid: bool
    distribution: str
    ecc: float
    sigma_max: float
    sigma_min: float
    ecc_across: float
    theta: float
    depth: float
    spread_len: float
    pad_spread: float
    course: float
    unit_len: float
    reaction: float
    changed: frozenset = field(default_factory=frozenset)


def _across_words(pad: dict | None) -> str:
    position = None if pad is None else pad.get("position_across")
    if position == "offset":
        return f"offset {number(pad.get('offset_across') or 0.0, plus=True)}"
    return {"near-face": "at near face", "centred": "centred", "far-face": "at far face"}.get(
        position or "", ""
    )


def _model(inp: dict, res: dict, changed=frozenset()) -> _Model:
    sp = res["spread"]
    beam, wall, mas = inp["beam"], inp["wall"], inp.get("masonry") or {}
    pad = inp.get("padstone")
    across = beam.get("orientation", "across") == "across"
    flange, bearing = float(beam["flange_width"]), float(beam["bearing_length"])
    foot_along = flange if across else bearing
    foot_across = bearing if across else flange
    L, W = float(sp["support_length"]), float(sp["support_width"])
    x0 = float(sp["footprint_x0"])
    y0 = float(sp["footprint_y0"])
    clay = mas.get("material") in ("clay", "calcium silicate")
    unit_h = mas.get("unit_height") or (65.0 if clay else 215.0)
    return _Model(
        reference="",
        ec6=str(res.get("basis", "")).startswith("EC6"),
        across=across,
        has_pad=pad is not None,
        pad_across=_across_words(pad),
        pad_words=""
        if pad is None
        else f"{pad.get('concrete') or ''} {'reinforced' if pad.get('reinforced') else 'plain'}".strip(),
        L=L,
        W=W,
        d=float(sp["support_depth"]),
        y0_wall=float(sp["support_y0"]),
        t=float(wall["thickness"]),
        a1=wall.get("a1"),
        a2=wall.get("a2"),
        # The stored footprint is the loaded part (a flexible end loads only part of it);
        # the beam itself is drawn at its full size from its near edge.
        foot_x0=x0,
        foot_x1=min(L, x0 + foot_along) if pad else x0 + foot_along,
        foot_y0=y0,
        foot_y1=min(W, y0 + foot_across),
        flange=flange,
        bearing=bearing,
        rx=float(sp["reaction_x"]),
        ry=float(sp["reaction_y"]),
        win_x0=float(sp["window_x0"]),
        win_x1=float(sp["window_x1"]),
        cx0=float(sp["contact_x0"]),
        cx1=float(sp["contact_x1"]),
        # Results stored before both readings were worked spread from the contact length.
        sx0=float(sp.get("spread_x0", sp["contact_x0"])),
        sx1=float(sp.get("spread_x1", sp["contact_x1"])),
        spread_reading=str(sp.get("spread_reading") or ""),
        rigid=bool(sp["rigid"]),
        distribution=str(sp["distribution"]),
        ecc=float(sp["eccentricity"]),
        sigma_max=float(sp["sigma_max"]),
        sigma_min=float(sp["sigma_min"]),
        ecc_across=float(sp["eccentricity_across"]),
        theta=float(sp["masonry_spread_deg"]),
        depth=float(sp["spread_depth"]),
        spread_len=float(sp["spread_length"]),
        pad_spread=45.0,
        course=float(unit_h) + 10.0,
        unit_len=215.0 if clay else 440.0,
        reaction=float(inp["load"]["reaction"]),
        changed=frozenset(changed),
    )


@dataclass(frozen=True)
class _Extent:
    left: float  # mm, support frame
    right: float
    wall_left: float  # where the wall's drawn part ends
    wall_right: float
    end_left: bool  # a real wall end is drawn there
    end_right: bool
    top: float  # mm above the masonry (negative z)
    bottom: float


def _masonry_reach(m: _Model) -> tuple[float, float, float, float]:
    """Left and right ends of the masonry spread at the check depth, and the depths at
    which each spread line meets a wall end (or the check depth)."""
    each = m.depth / math.tan(math.radians(m.theta)) if m.theta > 0 else 0.0
    left = m.sx0 - each
    right = m.sx1 + each
    zl = zr = m.depth
    if m.a1 is not None and left < -m.a1:
        left = -m.a1
        zl = (m.sx0 + m.a1) * math.tan(math.radians(m.theta))
    if m.a2 is not None and right > m.L + m.a2:
        right = m.L + m.a2
        zr = (m.L + m.a2 - m.sx1) * math.tan(math.radians(m.theta))
    return left, right, zl, zr


def _beam_height(m: _Model) -> float:
    # The beam's depth is not an input: it is drawn at a nominal size, said in the legend.
    return max(120.0, 0.9 * m.flange)


def _extent(m: _Model) -> _Extent:
    sl, sr, _, _ = _masonry_reach(m)
    left = min(0.0, sl) - RUN_ON
    right = max(m.L, sr) + RUN_ON
    end_left = m.a1 is not None and -m.a1 >= left
    end_right = m.a2 is not None and m.L + m.a2 <= right
    wall_left = -m.a1 if end_left else left
    wall_right = m.L + m.a2 if end_right else right
    if end_left:
        left = wall_left - OPENING
    if end_right:
        right = wall_right + OPENING
    return _Extent(
        left,
        right,
        wall_left,
        wall_right,
        end_left,
        end_right,
        -(m.d + _beam_height(m)),
        m.depth + BELOW,
    )


def _fit_scale(m: _Model) -> tuple[float, float]:
    """Drawing units per mm for the elevation and the section that fit the width."""
    e = _extent(m)
    elevation = (VIEW_W - 2 * MARGIN - 40) / (e.right - e.left)
    # The section is small in mm; it gets its own, larger scale, capped so a thin wall
    # is not blown up past what the labels need.
    sec_w = _section_width_mm(m)
    section = min((VIEW_W - 2 * MARGIN - 150) / sec_w, 1.6)
    return elevation, section


def _section_width_mm(m: _Model) -> float:
    return m.t + 2 * max(120.0, 0.5 * m.t) + (m.bearing if m.across else 0.0)


# --- the elevation along the wall ---------------------------------------------------------------


def _elevation(m: _Model, scale: float, y_top: float, changed: frozenset) -> tuple[str, float]:
    """The elevation along the wall, drawn part by part, each on top of the one before."""
    e = _extent(m)
    ox = MARGIN + 20 - e.left * scale
    title_h = FONT + 14
    oy = y_top + title_h + 2 * FONT + 60 - e.top * scale
    c = _Canvas(scale, ox, oy)
    c.raw(
        f'<g data-view="elevation" data-scale="{scale:.6g}" data-origin-x="{_n(ox)}" '
        f'data-origin-y="{_n(oy)}">'
    )
    c.text(MARGIN, y_top + FONT, "Elevation along the wall", anchor="start", bold=True)
    _wall_along(c, e, m)
    _padstone_along(c, m, changed)
    _beam_along(c, e, m, changed)
    _dimensions_along(c, e, m, changed)
    _masonry_spread_along(c, e, m)
    # The pressure under the padstone, hung below the wall on the same horizontal scale.
    band_top = c.sy(e.bottom) + 20
    y_end = _pressure(c, m, band_top, changed)
    c.raw("</g>")
    return "\n".join(c.parts), y_end


def _pad_changed_along(changed: frozenset) -> bool:
    return bool({"padstone_length", "padstone_depth", "padstone_present"} & changed)


def _wall_along(c: _Canvas, e: _Extent, m: _Model) -> None:
    """The wall: face, its drawn ends (real ends are thick; a wall that runs on is cut
    with a zigzag), and the courses."""
    wl, wr = c.sx(e.wall_left), c.sx(e.wall_right)
    top, bottom = c.sy(0), c.sy(e.bottom)
    c.rect(
        wl,
        top,
        wr - wl,
        bottom - top,
        fill=WALL_FILL,
        stroke="none",
        width=0,
        role="wall",
        left_mm=e.wall_left,
        right_mm=e.wall_right,
    )
    c.path(_courses(c, e, m), role="courses", course_mm=m.course)
    c.line(wl, top, wr, top, width=2.0, role="wall-top")
    for x, real, name, value in (
        (wl, e.end_left, "wall-end-a1", m.a1),
        (wr, e.end_right, "wall-end-a2", m.a2),
    ):
        if real:
            c.line(x, top, x, bottom, width=3.0, role=name, a_mm=value)
        else:
            c.poly(_zigzag_v(x, top, bottom), stroke=JOINT, width=1.5, role="wall-runs-on")
    c.poly(_zigzag_h(wl, wr, bottom), stroke=JOINT, width=1.5, role="wall-continues-down")


def _padstone_along(c: _Canvas, m: _Model, changed: frozenset) -> None:
    """The padstone, its concrete, and the 45° lines through it."""
    if not m.has_pad:
        return
    px0, px1 = c.sx(0), c.sx(m.L)
    top, ptop = c.sy(0), c.sy(-m.d)
    pad_changed = _pad_changed_along(changed)
    c.rect(
        px0,
        ptop,
        px1 - px0,
        top - ptop,
        fill=PAD_FILL,
        width=2.5,
        dash="8 4" if pad_changed else None,
        stroke=CHANGED if pad_changed else INK,
        role="padstone",
        length_mm=m.L,
        depth_mm=m.d,
        changed=pad_changed or None,
    )
    # Its concrete, where it fits inside: plain concrete is the usual site padstone and
    # takes a lower design strength (EN 1992-1-1 section 12).
    if _text_w(m.pad_words) + 8 < px1 - px0 and top - ptop > FONT + 4:
        c.text(
            (px0 + px1) / 2,
            (ptop + top) / 2 + FONT / 3,
            m.pad_words,
            role="padstone-concrete",
            reinforced=" reinforced" in f" {m.pad_words}",
        )
    for start, direction in ((m.foot_x0, -1), (m.foot_x1, 1)):
        c.poly(
            _pad_spread_line(m, start, direction, c),
            stroke=SPREAD,
            width=2.0,
            dash="6 4",
            role="padstone-spread",
            angle_deg=m.pad_spread,
        )


def _beam_along(c: _Canvas, e: _Extent, m: _Model, changed: frozenset) -> None:
    """The beam: its end (across the wall) or its side (in line), and the reaction."""
    ptop = c.sy(-m.d)
    bh = _beam_height(m) * c.scale
    fx0, fx1 = c.sx(m.foot_x0), c.sx(m.foot_x1)
    foot_changed = bool({"flange_width", "bearing_length", "offset_along"} & changed)
    ink = CHANGED if foot_changed else INK
    if m.across:
        _i_section(c, fx0, fx1, ptop, bh, ink)
    else:
        beam_left = c.sx(e.left + 10)
        c.rect(
            beam_left,
            ptop - bh,
            fx1 - beam_left,
            bh,
            fill="none",
            stroke=ink,
            width=2.0,
            role="beam-side",
        )
        c.line(beam_left, ptop - bh + 10, fx1, ptop - bh + 10, stroke=ink, width=1.0)
        c.line(beam_left, ptop - 10, fx1, ptop - 10, stroke=ink, width=1.0)
    c.rect(
        fx0,
        ptop - 8,
        fx1 - fx0,
        8,
        fill=BEAM_FILL,
        stroke=ink,
        width=1.5,
        role="footprint",
        length_mm=m.foot_x1 - m.foot_x0,
        changed=foot_changed or None,
    )
    rx = c.sx(m.rx)
    c.arrow_down(
        rx, ptop - bh - 4, 50, stroke=INK, role="reaction", x_mm=m.rx, n_ed_kn=m.reaction / 1000
    )
    c.text(rx + 10, ptop - bh - 24, f"N_Ed {number(m.reaction / 1000)} kN", anchor="start")


def _dimensions_along(c: _Canvas, e: _Extent, m: _Model, changed: frozenset) -> None:
    """Dimensions above: the padstone length (or the footprint with no padstone), a1, a2."""
    wl, wr = c.sx(e.wall_left), c.sx(e.wall_right)
    px0, px1 = c.sx(0), c.sx(m.L)
    top, ptop = c.sy(0), c.sy(-m.d)
    pad_changed = _pad_changed_along(changed)
    dim_y = ptop - _beam_height(m) * c.scale - 54 - 12
    if m.has_pad:
        mark = " ≠" if pad_changed else ""
        c.dim_h(
            px0,
            px1,
            dim_y,
            f"{_mm(m.L)}{mark}",
            fill=CHANGED if pad_changed else INK,
            role="dim-padstone-length",
            length_mm=m.L,
        )
        c.dim_v(px1 + 10, ptop, top, f"{_mm(m.d)}", role="dim-padstone-depth", depth_mm=m.d)
    else:
        c.text(
            (px0 + px1) / 2,
            dim_y - 6,
            "no padstone",
            fill=CHANGED if pad_changed else INK,
            role="no-padstone",
        )
    if e.end_left:
        c.text(wl - 6, top + 8, "wall end", anchor="end", rotate=True)
    if e.end_right:
        c.text(wr + 6 + FONT, top + 8, "wall end", anchor="end", rotate=True)
    if e.end_left and m.a1 and m.a1 >= 1:
        a1_changed = "a1" in changed
        c.dim_h(
            wl,
            px0,
            top - 14,
            f"a1 {_mm(m.a1)}{' ≠' if a1_changed else ''}",
            above=True,
            fill=CHANGED if a1_changed else INK,
            role="dim-a1",
            length_mm=m.a1,
        )
    if e.end_right and m.a2 and m.a2 >= 1:
        a2_changed = "a2" in changed
        c.dim_h(
            px1,
            wr,
            top - 14,
            f"a2 {_mm(m.a2)}{' ≠' if a2_changed else ''}",
            fill=CHANGED if a2_changed else INK,
            role="dim-a2",
            length_mm=m.a2,
        )


def _masonry_spread_along(c: _Canvas, e: _Extent, m: _Model) -> None:
    """The spread in the masonry down to the check depth, and the length it gives there."""
    wl, wr = c.sx(e.wall_left), c.sx(e.wall_right)
    top = c.sy(0)
    sl, sr, zl, zr = _masonry_reach(m)
    c.poly(
        [(c.sx(m.sx0), top), (c.sx(sl), c.sy(zl)), (c.sx(sl), c.sy(m.depth))],
        stroke=MASONRY_SPREAD,
        width=2.5,
        role="masonry-spread",
        angle_deg=m.theta,
    )
    c.poly(
        [(c.sx(m.sx1), top), (c.sx(sr), c.sy(zr)), (c.sx(sr), c.sy(m.depth))],
        stroke=MASONRY_SPREAD,
        width=2.5,
        role="masonry-spread",
        angle_deg=m.theta,
    )
    dy = c.sy(m.depth)
    c.line(
        wl,
        dy,
        wr,
        dy,
        stroke=MASONRY_SPREAD,
        width=1.0,
        dash="10 6",
        role="check-depth",
        depth_mm=m.depth,
    )
    name = "l_efm" if m.ec6 else "l_d"
    c.dim_h(
        c.sx(sl),
        c.sx(sr),
        dy,
        # Under a triangle of pressure the label says which reading of the loaded length
        # the wall's check kept (the shorter spread, the higher utilisation).
        f"{name} {_mm(m.spread_len)}"
        + (
            f" ({m.spread_reading.removesuffix(' reading').replace('-', ' ')})"
            if m.spread_reading
            else ""
        ),
        above=True,
        fill=MASONRY_SPREAD,
        role="spread-length",
        length_mm=m.spread_len,
        reading=m.spread_reading or None,
    )
    where = "h_c/2" if m.ec6 else "0.4 h"
    c.text(
        wl + 6,
        dy + FONT + 4,
        f"{m.theta:.0f}° to {where} = {_mm(m.depth)} below",
        anchor="start",
        fill=MASONRY_SPREAD,
    )


def _courses(c: _Canvas, e: _Extent, m: _Model) -> str:
    """Bed joints and perpends (half bond) as one path, so a page stays light."""
    parts = []
    x0, x1 = c.sx(e.wall_left), c.sx(e.wall_right)
    n = int(e.bottom // m.course) + 1
    for k in range(1, n + 1):
        z = k * m.course
        if z >= e.bottom:
            break
        parts.append(f"M{_n(x0)} {_n(c.sy(z))}H{_n(x1)}")
    for k in range(n):
        za, zb = k * m.course, min((k + 1) * m.course, e.bottom)
        shift = (m.unit_len / 2) * (k % 2)
        x = e.wall_left - ((e.wall_left - shift) % m.unit_len) + m.unit_len
        while x < e.wall_right:
            parts.append(f"M{_n(c.sx(x))} {_n(c.sy(za))}V{_n(c.sy(zb))}")
            x += m.unit_len
    return "".join(parts)


def _zigzag_v(x, y0, y1):
    mid = (y0 + y1) / 2
    return [(x, y0), (x, mid - 12), (x - 8, mid - 4), (x + 8, mid + 4), (x, mid + 12), (x, y1)]


def _zigzag_h(x0, x1, y):
    mid = (x0 + x1) / 2
    return [(x0, y), (mid - 12, y), (mid - 4, y - 8), (mid + 4, y + 8), (mid + 12, y), (x1, y)]


def _pad_spread_line(m: _Model, start: float, direction: int, c: _Canvas):
    """A 45° line from a footprint edge down through the padstone, stopped by its end."""
    end = start + direction * m.d
    if end < 0:
        return [(c.sx(start), c.sy(-m.d)), (c.sx(0), c.sy(-m.d + start))]
    if end > m.L:
        return [(c.sx(start), c.sy(-m.d)), (c.sx(m.L), c.sy(-m.d + (m.L - start)))]
    return [(c.sx(start), c.sy(-m.d)), (c.sx(end), c.sy(0))]


def _i_section(c: _Canvas, x0, x1, base, h, ink) -> None:
    t = max(6.0, 0.08 * h)
    web = max(4.0, 0.06 * (x1 - x0))
    mid = (x0 + x1) / 2
    c.poly(
        [
            (x0, base),
            (x1, base),
            (x1, base - t),
            (mid + web / 2, base - t),
            (mid + web / 2, base - h + t),
            (x1, base - h + t),
            (x1, base - h),
            (x0, base - h),
            (x0, base - h + t),
            (mid - web / 2, base - h + t),
            (mid - web / 2, base - t),
            (x0, base - t),
        ],
        closed=True,
        fill="none",
        stroke=ink,
        width=2.0,
        role="beam-end",
    )


def _pressure(c: _Canvas, m: _Model, band_top: float, changed: frozenset) -> float:
    c.text(
        MARGIN,
        band_top + FONT,
        "Pressure under the padstone" if m.has_pad else "Pressure under the beam",
        anchor="start",
        bold=True,
    )
    base = band_top + FONT + 14 + FONT + 8
    x0, x1 = c.sx(m.cx0), c.sx(m.cx1)
    peak = m.sigma_max if m.sigma_max > 0 else 1.0
    left, right = (m.sigma_max, m.sigma_min) if m.ecc < 0 else (m.sigma_min, m.sigma_max)
    if m.distribution == "uniform":
        left = right = m.sigma_max
    hl = PRESSURE_BAND * left / peak
    hr = PRESSURE_BAND * right / peak
    c.line(c.sx(0), base, c.sx(m.L), base, width=2.0, role="pressure-base", length_mm=m.L)
    c.poly(
        [(x0, base), (x1, base), (x1, base + hr), (x0, base + hl)],
        closed=True,
        fill=PRESSURE_FILL,
        stroke=INK,
        width=1.5,
        role="pressure",
        distribution=m.distribution,
        contact_x0_mm=m.cx0,
        contact_x1_mm=m.cx1,
        sigma_max_n_mm2=m.sigma_max,
        sigma_min_n_mm2=m.sigma_min,
    )
    px = x0 if (m.ecc < 0 or m.distribution == "uniform") else x1
    changed_mark = " ≠" if "sigma_max" in changed else ""
    label = f"σ_max {number(m.sigma_max)} N/mm²{changed_mark}"
    w = _text_w(label)
    tx = min(max(px, MARGIN + w / 2), VIEW_W - MARGIN - w / 2)
    c.text(
        tx,
        base + PRESSURE_BAND + FONT + 6,
        label,
        fill=CHANGED if changed_mark else INK,
        role="peak-pressure",
        sigma_max_n_mm2=m.sigma_max,
        shown=number(m.sigma_max),
    )
    kind = {"uniform": "uniform", "trapezoid": "trapezoid", "triangle": "triangle"}.get(
        m.distribution, m.distribution
    )
    words = f"{kind}, {'rigid padstone' if m.rigid else 'dispersed at 45°'}" if m.has_pad else kind
    c.text(MARGIN, base - 8, words, anchor="start", role="distribution")
    return base + PRESSURE_BAND + FONT + 20


# --- the section across the wall ----------------------------------------------------------------


def _section(m: _Model, scale: float, y_top: float, changed: frozenset) -> tuple[str, float]:
    """The section across the wall, drawn part by part, each on top of the one before."""
    bh = _beam_height(m)
    ox = MARGIN + 30 + (m.bearing * scale if m.across else 40.0)
    below = _section_below(m)
    oy = y_top + FONT + 14 + 2 * FONT + 44 + (m.d + bh) * scale
    c = _Canvas(scale, ox, oy)
    c.raw(
        f'<g data-view="section" data-scale="{scale:.6g}" data-origin-x="{_n(ox)}" data-origin-y="{_n(oy)}">'
    )
    c.text(MARGIN, y_top + FONT, "Section across the wall", anchor="start", bold=True)
    _wall_across(c, m, changed)
    _padstone_across(c, m, changed)
    _beam_across(c, m, changed)
    _dimensions_across(c, m, changed)
    c.raw("</g>")
    return "\n".join(c.parts), c.sy(below) + FONT + 16


def _section_below(m: _Model) -> float:
    """How much of the wall the section shows below its top, in mm."""
    return max(220.0, 0.8 * m.t)


def _wall_across(c: _Canvas, m: _Model, changed: frozenset) -> None:
    """The wall cut across: its faces, a zigzag where it goes on down, and its centre line."""
    t_changed = "wall_thickness" in changed
    w0, w1 = c.sx(0), c.sx(m.t)
    top, bottom = c.sy(0), c.sy(_section_below(m))
    c.rect(
        w0,
        top,
        w1 - w0,
        bottom - top,
        fill=WALL_FILL,
        stroke="none",
        width=0,
        role="wall",
        thickness_mm=m.t,
        changed=t_changed or None,
    )
    for x in (w0, w1):
        c.line(x, top, x, bottom, width=2.5, stroke=CHANGED if t_changed else INK)
    c.poly(_zigzag_h(w0, w1, bottom), stroke=JOINT, width=1.5)
    c.line(w0, top, w1, top, width=2.0)
    # Centre line, dash-dot.
    cl = c.sx(m.t / 2)
    c.line(
        cl,
        c.sy(-(m.d + _beam_height(m)) - 20),
        cl,
        bottom + 10,
        stroke=INK,
        width=1.0,
        dash="14 4 3 4",
        role="centre-line",
        y_mm=m.t / 2,
    )


def _padstone_across(c: _Canvas, m: _Model, changed: frozenset) -> None:
    if not m.has_pad:
        return
    pad_changed = bool({"padstone_width", "padstone_depth", "padstone_present"} & changed)
    py0, py1 = c.sx(m.y0_wall), c.sx(m.y0_wall + m.W)
    top, ptop = c.sy(0), c.sy(-m.d)
    c.rect(
        py0,
        ptop,
        py1 - py0,
        top - ptop,
        fill=PAD_FILL,
        width=2.5,
        stroke=CHANGED if pad_changed else INK,
        dash="8 4" if pad_changed else None,
        role="padstone",
        width_mm=m.W,
        depth_mm=m.d,
        changed=pad_changed or None,
    )


def _beam_across(c: _Canvas, m: _Model, changed: frozenset) -> None:
    """The beam: its side (across the wall) or its end (in line), and the reaction."""
    ptop = c.sy(-m.d)
    fy0 = c.sx(m.y0_wall + m.foot_y0)
    fy1 = c.sx(m.y0_wall + m.foot_y1)
    foot_changed = bool({"bearing_length", "flange_width", "offset_across"} & changed)
    ink = CHANGED if foot_changed else INK
    bhu = _beam_height(m) * c.scale
    if m.across:
        # The beam comes from the near face's side and stops on the padstone.
        left = MARGIN
        c.rect(
            left, ptop - bhu, fy1 - left, bhu, fill="none", stroke=ink, width=2.0, role="beam-side"
        )
        c.line(left, ptop - bhu + 8, fy1, ptop - bhu + 8, stroke=ink, width=1.0)
        c.line(left, ptop - 8, fy1, ptop - 8, stroke=ink, width=1.0)
    else:
        _i_section(c, fy0, fy1, ptop, bhu, ink)
    c.rect(
        fy0,
        ptop - 8,
        fy1 - fy0,
        8,
        fill=BEAM_FILL,
        stroke=ink,
        width=1.5,
        role="footprint",
        width_mm=m.foot_y1 - m.foot_y0,
        changed=foot_changed or None,
    )
    ry = c.sx(m.y0_wall + m.ry)
    c.arrow_down(ry, ptop - bhu - 4, 40, role="reaction", y_mm=m.y0_wall + m.ry)


def _dimensions_across(c: _Canvas, m: _Model, changed: frozenset) -> None:
    """Dimensions: the wall below, padstone and bearing above, eccentricity between."""
    t_changed = "wall_thickness" in changed
    w0, w1 = c.sx(0), c.sx(m.t)
    below = _section_below(m)
    top, bottom, ptop = c.sy(0), c.sy(below), c.sy(-m.d)
    fy0 = c.sx(m.y0_wall + m.foot_y0)
    fy1 = c.sx(m.y0_wall + m.foot_y1)
    c.dim_h(
        w0,
        w1,
        bottom - 30,
        f"t {_mm(m.t)}{' ≠' if t_changed else ''}",
        fill=CHANGED if t_changed else INK,
        role="dim-wall-thickness",
        length_mm=m.t,
    )
    ytxt = ptop - _beam_height(m) * c.scale - 30
    if m.across:
        lb_changed = "bearing_length" in changed
        c.dim_h(
            fy0,
            fy1,
            ytxt - FONT - 12,
            f"l_b {_mm(m.bearing)}{' ≠' if lb_changed else ''}",
            fill=CHANGED if lb_changed else INK,
            role="dim-bearing-length",
            length_mm=m.bearing,
        )
    else:
        c.dim_h(
            fy0,
            fy1,
            ytxt - FONT - 12,
            f"b_f {_mm(m.flange)}",
            role="dim-flange-width",
            length_mm=m.flange,
        )
    if m.has_pad:
        c.dim_v(
            max(c.sx(m.y0_wall + m.W), w1) + 16,
            ptop,
            top,
            f"padstone {_mm(m.W)} × {_mm(m.d)}" + (f", {m.pad_across}" if m.pad_across else ""),
            role="dim-padstone-width",
            width_mm=m.W,
        )
    e = m.ecc_across
    cl, ry = c.sx(m.t / 2), c.sx(m.y0_wall + m.ry)
    ey = c.sy(below * 0.45)
    c.line(cl, ey, ry, ey, stroke=MASONRY_SPREAD, width=2.0, role="eccentricity", e_mm=e)
    c.line(ry, ptop, ry, ey, stroke=MASONRY_SPREAD, width=1.0, dash="4 4")
    label = f"e {number(abs(e))} (t/4 = {number(m.t / 4)})"
    c.text(
        max(w1, ry) + 12,
        ey + FONT / 3,
        label,
        anchor="start",
        fill=MASONRY_SPREAD,
        role="eccentricity-label",
        e_mm=e,
    )
    c.text(w0 - 6, bottom + FONT + 4, "near face", anchor="start")


# --- putting it together ------------------------------------------------------------------------


def _drawing(inp, res, title, el_scale, sec_scale, y_top, changed=frozenset()) -> tuple[str, float]:
    m = _model(inp, res, changed)
    parts = [
        f"<g data-drawing={quoteattr(title)} data-basis={quoteattr(str(res.get('basis', '')))}>",
    ]
    y = y_top
    wrapped = _wrap(title, int((VIEW_W - 2 * MARGIN) / (0.58 * FONT)))
    for line in wrapped:
        y += FONT + 6
        parts.append(
            f'<text x="{_n(MARGIN)}" y="{_n(y)}" font-size="{_n(FONT)}" font-weight="bold" '
            f'fill="{INK}" data-role="title">{escape(line)}</text>'
        )
    y += 10
    body, y = _elevation(m, el_scale, y, changed)
    parts.append(body)
    body, y = _section(m, sec_scale, y + 10, changed)
    parts.append(body)
    legend = "Drawn to scale except the beam's depth. Lengths in mm."
    y += FONT
    parts.append(
        f'<text x="{_n(MARGIN)}" y="{_n(y)}" font-size="{_n(FONT)}" fill="{INK}">{escape(legend)}</text>'
    )
    parts.append("</g>")
    return "\n".join(parts), y + 10


def _wrap(words: str, width: int) -> list[str]:
    lines, line = [], ""
    for word in words.split():
        if line and len(line) + 1 + len(word) > width:
            lines.append(line)
            line = word
        else:
            line = f"{line} {word}" if line else word
    if line:
        lines.append(line)
    return lines or [""]


def _svg(body: str, height: float, label: str) -> str:
    return (
        f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {_n(VIEW_W)} {_n(height)}" '
        f'role="img" aria-label={quoteattr(label)} font-family="sans-serif" '
        f'data-font-units="{_n(FONT)}" class="bearing-drawing">\n'
        f"<title>{escape(label)}</title>\n"
        f'<rect x="0" y="0" width="{_n(VIEW_W)}" height="{_n(height)}" fill="#ffffff" stroke="none"/>\n'
        f"{body}\n</svg>\n"
    )


def bearing_svg(design_input: dict, result: dict, *, title: str) -> str:
    """One bearing, drawn from its input and its result (both as stored dicts)."""
    el, sec = _fit_scale(_model(design_input, result))
    body, height = _drawing(design_input, result, title, el, sec, 0.0)
    return _svg(body, height, title)


# What is compared for the side-by-side drawing: name → how to read it from (input, result).
_COMPARED = (
    ("padstone_present", "padstone", lambda i, r: i.get("padstone") is not None, ""),
    (
        "padstone_length",
        "padstone length",
        lambda i, r: (i.get("padstone") or {}).get("length"),
        "mm",
    ),
    ("padstone_width", "padstone width", lambda i, r: (i.get("padstone") or {}).get("width"), "mm"),
    ("padstone_depth", "padstone depth", lambda i, r: (i.get("padstone") or {}).get("depth"), "mm"),
    (
        "padstone_reinforced",
        "padstone reinforced",
        lambda i, r: None if i.get("padstone") is None else bool(i["padstone"].get("reinforced")),
        "",
    ),
    ("bearing_length", "bearing length", lambda i, r: i["beam"]["bearing_length"], "mm"),
    ("flange_width", "flange width", lambda i, r: i["beam"]["flange_width"], "mm"),
    ("offset_along", "offset along", lambda i, r: i["beam"].get("offset_along"), "mm"),
    ("offset_across", "offset across", lambda i, r: i["beam"].get("offset_across"), "mm"),
    ("wall_thickness", "wall thickness", lambda i, r: i["wall"]["thickness"], "mm"),
    ("a1", "a1", lambda i, r: i["wall"].get("a1"), "mm"),
    ("a2", "a2", lambda i, r: i["wall"].get("a2"), "mm"),
    ("sigma_max", "peak pressure", lambda i, r: round(r["spread"]["sigma_max"], 2), "N/mm²"),
    ("spread_length", "spread length", lambda i, r: round(r["spread"]["spread_length"]), "mm"),
)


def differences(
    design: tuple[dict, dict], as_built: tuple[dict, dict]
) -> list[tuple[str, str, object, object, str]]:
    """(name, words, design value, as-built value, unit) for every value that differs."""
    out = []
    for name, words, read, unit in _COMPARED:
        a, b = read(*design), read(*as_built)
        if isinstance(a, float) and isinstance(b, float):
            same = math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-6)
        else:
            same = a == b
        if not same:
            out.append((name, words, a, b, unit))
    return out


def _value_text(v, unit: str) -> str:
    if v is None:
        return "none"
    if v is True:
        return "yes"
    if v is False:
        return "no"
    if isinstance(v, float):
        return f"{number(v)}{' ' + unit if unit else ''}"
    return f"{v}{' ' + unit if unit else ''}"


def side_by_side_svg(
    design: tuple[dict, dict], as_built: tuple[dict, dict], *, title: str = ""
) -> str:
    """Design and as built, each an (input, result) pair, at one scale so sizes compare
    by eye; the as-built drawing marks what changed (≠ and a dashed outline, never colour
    alone), and a list under both names every difference."""
    dm = _model(*design)
    am = _model(*as_built)
    el = min(_fit_scale(dm)[0], _fit_scale(am)[0])
    sec = min(_fit_scale(dm)[1], _fit_scale(am)[1])
    diffs = differences(design, as_built)
    changed = frozenset(d[0] for d in diffs)
    prefix = f"{title}: " if title else ""
    body1, y = _drawing(*design, f"{prefix}design", el, sec, 0.0)
    body2, y = _drawing(*as_built, f"{prefix}as built", el, sec, y + 20, changed)
    lines = [body1, body2]
    y += FONT + 10
    lines.append(
        f'<text x="{_n(MARGIN)}" y="{_n(y)}" font-size="{_n(FONT)}" font-weight="bold" fill="{INK}">'
        f"{escape('Differences, as built against design' if diffs else 'As built matches the design in every drawn value')}</text>"
    )
    for name, words, a, b, unit in diffs:
        y += FONT + 8
        text = f"≠ {words}: {_value_text(a, unit)} → {_value_text(b, unit)}"
        lines.append(
            f'<text x="{_n(MARGIN)}" y="{_n(y)}" font-size="{_n(FONT)}" fill="{CHANGED}" '
            f'data-role="difference" data-field={quoteattr(name)}>{escape(text)}</text>'
        )
    label = f"{prefix}design and as built"
    return _svg("\n".join(lines), y + 20, label)
