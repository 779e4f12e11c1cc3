"""Diagrams with matplotlib: the axis and its thrust lines, force diagrams, envelopes, influence lines,
buckling modes, the ring at collapse, and the trade-study plots. Every function takes an optional
Axes and returns the Axes it drew on; none calls ``plt.show()`` (no pyplot state is used at all).

What to draw is computed first, without matplotlib (`diagram_points`, `nice_step`, `rounded`,
`is_flat`); the drawing functions only draw it. Signs as everywhere in formfind: N tension positive,
M positive with the intrados in tension; force diagrams drawn along the arch put positive values on
the intrados side (the side in tension for M). Each load combination keeps one colour, for its line
and its fill, in every figure (`colours`).
"""

from __future__ import annotations

import math

import numpy as np

from formfind.model.geometry import Axis

UNITS = {"N": "kN", "V": "kN", "M": "kNm"}
NAMES = {"N": "axial force N", "V": "shear V", "M": "bending moment M"}
PALETTE = ("#1f77b4", "#d62728", "#2ca02c", "#9467bd", "#ff7f0e", "#17becf", "#8c564b", "#e377c2", "#7f7f7f",
           "#bcbd22")  # ten distinct hues, assigned in the order the combinations appear
AXIS_COLOUR, RIB_COLOUR = "#222222", "#c8c8c8"


def _sentence(text: str) -> str:
    return text[:1].upper() + text[1:]


def colours(groups) -> dict[str, str]:
    """One colour per load case or combination, in the order given (repeating after ten)."""
    return {g: PALETTE[k % len(PALETTE)] for k, g in enumerate(dict.fromkeys(groups))}


# ------------------------------------------------------------------------- what to draw, no matplotlib
def nice_step(value: float) -> float:
    """The largest 1, 2 or 5 x 10^k not above ``value`` (a scale bar's length)."""
    if not value > 0 or not math.isfinite(value):
        return 1.0
    power = 10.0 ** math.floor(math.log10(value))
    for mult in (5.0, 2.0, 1.0):
        if mult * power <= value * (1 + 1e-12):
            return mult * power
    return power


def diagram_points(axis: Axis, right: np.ndarray, left: np.ndarray | None, scale: float) -> tuple[np.ndarray, np.ndarray]:
    """Base points on the axis and tips of a force diagram drawn normal to it, positive values on
    the intrados side, ``scale`` m per unit of force. Where the two sides of a station differ (a point
    load) both are drawn, so the diagram jumps there. Returns (base, tip), each (points, 2)."""
    pts = np.stack([axis.x, axis.y], axis=-1)
    left = right if left is None else left
    base, value, normal = [], [], []
    for i in range(axis.count):
        if i > 0 and abs(left[i] - right[i]) > 1e-9 * max(1.0, abs(right[i])):
            base.append(pts[i])
            value.append(left[i])
            normal.append(axis.normal[i])
        base.append(pts[i])
        value.append(right[i])
        normal.append(axis.normal[i])
    base, value, normal = np.array(base), np.array(value), np.array(normal)
    return base, base - normal * (value * scale)[:, None]


def rounded(values: np.ndarray, digits: int = 4) -> np.ndarray:
    """Values rounded to ``digits`` significant figures of the largest magnitude among them: what a
    study plot draws, so that solver noise below that precision does not look like a trend."""
    values = np.asarray(values, dtype=float)
    finite = np.abs(values[np.isfinite(values)])
    if not finite.size or finite.max() == 0:
        return values.copy()
    decimals = digits - 1 - math.floor(math.log10(float(finite.max())))
    return np.round(values, decimals)


FLAT_TOLERANCE = 1e-4  # a study quantity varying less than this fraction of its size is drawn as constant


def is_flat(values: np.ndarray, tolerance: float = FLAT_TOLERANCE) -> bool:
    """True if the finite values vary by less than ``tolerance`` of their largest magnitude."""
    finite = np.asarray(values, dtype=float)
    finite = finite[np.isfinite(finite)]
    if finite.size < 2:
        return False
    return float(np.ptp(finite)) <= tolerance * max(float(np.abs(finite).max()), 1e-300)


# ---------------------------------------------------------------------------------------- figures
def new_axes(width: float = 9.0, height: float = 4.6):
    """A fresh Figure and Axes (Agg canvas, no pyplot)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height), dpi=120)  # PNG: about 150 dpi across an A4 page
    FigureCanvasAgg(fig)
    ax = fig.add_subplot(1, 1, 1)
    ax.ticklabel_format(useOffset=False, style="plain")
    return ax


def _frame_arch(ax, points: np.ndarray, span: float) -> None:
    """Equal scales, the view tight around ``points`` (m) with a margin, no offset notation, and the
    figure's height fitted to the drawing so that no band of empty paper is left."""
    finite = points[np.all(np.isfinite(points), axis=1)]
    lo, hi = finite.min(axis=0), finite.max(axis=0)
    margin = 0.04 * span
    width, height = hi[0] - lo[0] + 2 * margin, hi[1] - lo[1] + 2 * margin
    ax.set_xlim(lo[0] - margin, hi[0] + margin)
    ax.set_ylim(lo[1] - margin, hi[1] + margin)
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel("x (m)")
    ax.set_ylabel("y (m)")
    ax.grid(True, lw=0.3, color="#dddddd")
    fig = ax.figure
    plot_width = fig.get_figwidth() - LEFT_IN - RIGHT_IN
    fig.set_figheight(float(np.clip(plot_width * height / width + TOP_IN + BOTTOM_IN + 0.5, 2.8, 7.5)))


TOP_IN, BOTTOM_IN, LEFT_IN, RIGHT_IN = 0.42, 0.52, 0.75, 0.25  # margins around the axes, inches
LEGEND_ROW_IN = 0.2  # height of one legend row, inches


def _legend_below(ax, ncol: int = 3, handles=None) -> None:
    """The legend under the axes in rows of ``ncol``, with margins set in inches so that title, x label
    and legend never overlap, in one drawing pass (no layout engine, no tight bounding box)."""
    if handles is None:
        handles, _ = ax.get_legend_handles_labels()
    fig = ax.figure
    rows = -(-len(handles) // ncol) if handles else 0
    place(fig, BOTTOM_IN + LEGEND_ROW_IN * rows + (0.05 if rows else 0.0))
    if handles:
        fig.legend(handles=handles, loc="lower center", bbox_to_anchor=(0.5, 0.01), fontsize=7.5, ncol=ncol,
                   frameon=False)


def place(fig, bottom_in: float = BOTTOM_IN, right_in: float = RIGHT_IN) -> None:
    """Set the axes' margins in inches (the figure's size is already final)."""
    w, h = fig.get_figwidth(), fig.get_figheight()
    fig.subplots_adjust(left=LEFT_IN / w, right=1 - right_in / w, top=1 - TOP_IN / h, bottom=min(bottom_in / h, 0.6))


def _rib(ax, axis: Axis, depth_m: np.ndarray) -> np.ndarray:
    """The rib as a light band between intrados and extrados; returns the outline's points."""
    intra, extra = axis.intrados(depth_m), axis.extrados(depth_m)
    outline = np.vstack([intra, extra[::-1]])
    ax.fill(outline[:, 0], outline[:, 1], color=RIB_COLOUR, lw=0.6, ec="#999999", label="rib")
    return outline


def plot_axis(axis: Axis, depth_m: np.ndarray, thrust_lines=(), clearance=(), envelope=(), hinge_station=None,
              colour_of: dict[str, str] | None = None, ax=None, reference: np.ndarray | None = None):
    """The rib, the axis, thrust lines (label, points), clearance / site lines (m), the supports, and
    the architect's reference curve (points (n, 2), m) where form finding kept near one."""
    ax = ax or new_axes()
    outline = _rib(ax, axis, depth_m)
    if reference is not None:
        ax.plot(reference[:, 0], reference[:, 1], color="#8c564b", lw=1.0, ls=(0, (6, 3)), label="reference curve")
        outline = np.vstack([outline, reference])
    ax.plot(axis.x, axis.y, color=AXIS_COLOUR, lw=1.3, label="axis")
    colour_of = colour_of or colours([label for label, _ in thrust_lines])
    for label, line in thrust_lines:
        ax.plot(line[:, 0], line[:, 1], ls="--", lw=1.1, color=colour_of.get(label), label=f"thrust line, {label}")
    for polyline, name, style in ((clearance, "clearance line", ":"), (envelope, "site line", "-.")):
        if polyline:
            p = np.array(polyline)
            ax.plot(p[:, 0], p[:, 1], ls=style, color="#6a3d9a", lw=1.2, label=name)
            outline = np.vstack([outline, p])
    ax.plot(axis.x[[0, -1]], axis.y[[0, -1]], "^", color=AXIS_COLOUR, ms=7, label="springings")
    if hinge_station is not None:
        ax.plot(axis.x[hinge_station], axis.y[hinge_station], "o", mfc="white", mec=AXIS_COLOUR, ms=6,
                label="crown hinge")
    _frame_arch(ax, outline, axis.span_m)
    ax.set_title("The axis, the rib and the thrust lines of the governing combinations", fontsize=10)
    _legend_below(ax)
    return ax


def _scale_bar(ax, length_m: float, value: float, unit: str) -> None:
    """A bar of ``length_m`` in data units labelled with the force it stands for, lower left."""
    from mpl_toolkits.axes_grid1.anchored_artists import AnchoredSizeBar

    bar = AnchoredSizeBar(ax.transData, length_m, f"{value:g} {unit}", "lower left", pad=0.4, borderpad=0.6,
                          sep=3, frameon=True, size_vertical=0.0, fontproperties={"size": 7.5})
    bar.patch.set_alpha(0.85)
    ax.add_artist(bar)


def plot_along_arch(axis: Axis, right: np.ndarray, left: np.ndarray | None, effect: str, label: str,
                    peak: tuple[float, float] | None = None, colour: str = "#1f77b4", ax=None,
                    scale: float | None = None):
    """A force diagram drawn along the arch, normal to it (positive towards the intrados), with a
    scale bar for the force and the peak labelled with ``peak`` = (value, x m), the summary's numbers."""
    ax = ax or new_axes()
    right = np.asarray(right, dtype=float)
    both = right if left is None else np.concatenate([right, left])
    top = float(np.abs(both).max()) or 1.0
    scale = scale if scale is not None else 0.15 * axis.span_m / top
    base, tip = diagram_points(axis, right, left, scale)
    ax.plot(axis.x, axis.y, color=AXIS_COLOUR, lw=1.0, label="axis")
    poly = np.vstack([base, tip[::-1]])
    ax.fill(poly[:, 0], poly[:, 1], color=colour, alpha=0.18, lw=0)
    ax.plot(tip[:, 0], tip[:, 1], lw=1.2, color=colour, label=f"{NAMES[effect]}, {label}")
    step = max(1, base.shape[0] // 60)
    for p, t in zip(base[::step], tip[::step], strict=True):
        ax.plot([p[0], t[0]], [p[1], t[1]], color=colour, lw=0.35, alpha=0.6)
    if peak is not None:
        value, x_at = peak
        i = int(np.argmin(np.abs(axis.x - x_at)))
        at = np.array([axis.x[i], axis.y[i]]) - axis.normal[i] * value * scale
        centre = np.array([0.5 * (axis.x[0] + axis.x[-1]), 0.5 * (axis.y.min() + axis.y.max())])
        away = (-70 if at[0] > centre[0] else 14, -30 if at[1] > centre[1] else 14)  # towards the inside
        ax.annotate(f"{value:.1f} {UNITS[effect]}\nat x = {x_at:.2f} m", at, xytext=away,
                    textcoords="offset points", fontsize=8, arrowprops={"arrowstyle": "-", "lw": 0.6},
                    bbox={"boxstyle": "round,pad=0.2", "fc": "white", "ec": "#999999", "lw": 0.5})
    bar_value = nice_step(0.5 * top)
    _scale_bar(ax, bar_value * scale, bar_value, UNITS[effect])
    _frame_arch(ax, np.vstack([base, tip]), axis.span_m)
    ax.set_title(f"{_sentence(NAMES[effect])} along the arch, {label} (positive drawn on the intrados side)",
                 fontsize=10)
    _legend_below(ax, ncol=2)
    return ax


def envelope_steps(x: np.ndarray, right: np.ndarray, left: np.ndarray | None) -> tuple[np.ndarray, np.ndarray]:
    """A diagram against x as a polyline with a vertical step wherever the two sides of a station
    differ (a point load): (x, values) with the left value then the right value at such stations."""
    if left is None:
        return np.asarray(x, dtype=float), np.asarray(right, dtype=float)
    xs, vs = [], []
    for i in range(x.size):
        if 0 < i and abs(left[i] - right[i]) > 1e-9 * max(1.0, abs(right[i])):
            xs.append(x[i])
            vs.append(left[i])
        xs.append(x[i])
        vs.append(right[i])
    return np.array(xs), np.array(vs)


def side_envelopes(response, group: str, effect: str):
    """Largest and least of ``effect`` over ``group``'s states on each side of every station:
    (max right, max left, min right, min left); left ones None for M (it has no jump)."""
    idx = [k for k, g in enumerate(response.groups) if g == group]
    right = getattr(response, effect)[idx]
    if effect == "M":
        return right.max(axis=0), None, right.min(axis=0), None
    left = getattr(response, f"{effect}_left")[idx]
    return right.max(axis=0), left.max(axis=0), right.min(axis=0), left.min(axis=0)


def plot_envelopes(x: np.ndarray, response, groups, effect: str, colour_of: dict[str, str], ax=None):
    """Envelopes (largest and least) of one effect against x for ``groups`` of ``response``, one colour
    per combination for its lines and its band, steps drawn at point loads; the legend is built from
    the lines themselves."""
    from matplotlib.lines import Line2D

    ax = ax or new_axes()
    handles = []
    for group in groups:
        colour = colour_of[group]
        hi_r, hi_l, lo_r, lo_l = side_envelopes(response, group, effect)
        xs, hi = envelope_steps(x, hi_r, hi_l)
        xs_lo, lo = envelope_steps(x, lo_r, lo_l)
        if xs_lo.size == xs.size:
            ax.fill_between(xs, lo, hi, color=colour, alpha=0.10, lw=0)
        ax.plot(xs, hi, color=colour, lw=1.1)
        ax.plot(xs_lo, lo, color=colour, lw=1.1, ls="--")
        handles.append(Line2D([], [], color=colour, lw=1.6, label=group))
    handles += [Line2D([], [], color="#555555", lw=1.1, label="largest"),
                Line2D([], [], color="#555555", lw=1.1, ls="--", label="least")]
    ax.axhline(0.0, color="#333333", lw=0.6)
    ax.set_xlabel("x (m)")
    ax.set_ylabel(f"{effect} ({UNITS[effect]})")
    ax.set_title(f"Envelopes of {NAMES[effect]} over each combination's states", fontsize=10)
    ax.grid(True, lw=0.3, color="#dddddd")
    _legend_below(ax, ncol=4, handles=handles)
    return ax


def plot_influence_line(x: np.ndarray, ordinates: np.ndarray, label: str, unit: str, ax=None):
    """An influence line: the effect for a unit downward load (1 kN) at each abscissa."""
    ax = ax or new_axes()
    ax.plot(x, ordinates, lw=1.2, color=PALETTE[0])
    ax.fill_between(x, 0.0, ordinates, where=ordinates >= 0, color=PALETTE[1], alpha=0.2, lw=0, label="adverse for the largest")
    ax.fill_between(x, 0.0, ordinates, where=ordinates < 0, color=PALETTE[0], alpha=0.2, lw=0, label="adverse for the least")
    ax.axhline(0.0, color="#333333", lw=0.6)
    ax.set_xlabel("position of a 1 kN downward load, x (m)")
    ax.set_ylabel(f"{label} ({unit} per kN)")
    ax.set_title(f"Influence line of {label}", fontsize=10)
    ax.grid(True, lw=0.3, color="#dddddd")
    _legend_below(ax, ncol=2)
    return ax


def plot_buckling_mode(axis: Axis, mode: np.ndarray, factor: float, symmetry: str, group: str, ax=None):
    """A buckling mode (stations, 3) over the undeformed axis, drawn with its largest displacement at a
    tenth of the span (a shape: the amplitude of a linear buckling mode is arbitrary)."""
    ax = ax or new_axes()
    peak = float(np.abs(mode[:, :2]).max()) or 1.0
    amp = 0.1 * axis.span_m / peak
    moved = np.stack([axis.x + amp * mode[:, 0], axis.y + amp * mode[:, 1]], axis=-1)
    ax.plot(axis.x, axis.y, color="#999999", lw=1.0, label="axis")
    ax.plot(moved[:, 0], moved[:, 1], lw=1.4, color=PALETTE[1], label=f"first mode, {symmetry}")
    _frame_arch(ax, np.vstack([moved, np.stack([axis.x, axis.y], axis=-1)]), axis.span_m)
    ax.set_title(f"In-plane buckling of {group}: load factor {factor:.3g} (mode shape, scaled)", fontsize=10)
    _legend_below(ax, ncol=2)
    return ax


def plot_lateral_mode(axis: Axis, mode: np.ndarray, factor: float, group: str, depth_m: np.ndarray, braces=(),
                      ax=None):
    """An out-of-plane buckling mode in plan: the sideways movement along x of the rib's axis and of its
    extrados and intrados faces (the axis's movement -+ twist x half the depth), scaled so that the largest
    is 1 (a shape: the amplitude of a linear mode is arbitrary); lateral braces marked."""
    ax = ax or new_axes()
    w, twist = mode[:, 0], mode[:, 1]
    top, bottom = w + twist * 0.5 * depth_m, w - twist * 0.5 * depth_m
    scale = max(float(np.abs(np.concatenate([w, top, bottom])).max()), 1e-300)
    ax.axhline(0.0, color="#999999", lw=1.0)
    ax.plot(axis.x, top / scale, lw=1.0, ls="--", color=PALETTE[3], label="extrados face")
    ax.plot(axis.x, bottom / scale, lw=1.0, ls=":", color=PALETTE[2], label="intrados face")
    ax.plot(axis.x, w / scale, lw=1.6, color=PALETTE[1], label="axis")
    for x in braces:
        ax.plot([x], [0.0], marker="s", color="#6a3d9a", ms=5, ls="none")
    if braces:
        ax.plot([], [], marker="s", color="#6a3d9a", ls="none", label="lateral braces")
    ax.set_ylim(-1.15, 1.15)
    ax.set_xlim(axis.x[0], axis.x[-1])
    ax.set_xlabel("x (m)", fontsize=9)
    ax.set_ylabel("sideways movement (scaled)", fontsize=9)
    ax.set_title(f"Out-of-plane buckling of {group}: load factor {factor:.3g} (mode in plan, scaled)", fontsize=10)
    _legend_below(ax, ncol=4)
    return ax


def plot_mode(axis: Axis, shape: np.ndarray, number: int, frequency_hz: float, symmetry: str, direction: str,
              ax=None):
    """One natural mode shape (stations, 3) over the axis, its largest displacement drawn at a twentieth
    of the span (a shape: the amplitude of a free vibration mode is arbitrary)."""
    ax = ax or new_axes()
    amp = axis.span_m / 20.0
    moved = np.stack([axis.x + amp * shape[:, 0], axis.y + amp * shape[:, 1]], axis=-1)
    ax.plot(axis.x, axis.y, color="#999999", lw=1.0, label="axis")
    ax.plot(moved[:, 0], moved[:, 1], lw=1.4, color=PALETTE[0], label=f"mode {number}, {symmetry}, {direction}")
    _frame_arch(ax, np.vstack([moved, np.stack([axis.x, axis.y], axis=-1)]), axis.span_m)
    ax.set_title(f"Natural mode {number} in the plane: {frequency_hz:.3g} Hz (shape, scaled)", fontsize=10)
    _legend_below(ax, ncol=2)
    return ax


def plot_deflected(axis: Axis, ux: np.ndarray, uy: np.ndarray, state: str, at_x_m: float, ax=None):
    """The axis and its deflected shape under one state, displacements magnified by a round factor so
    the largest is about a twentieth of the span; the factor is in the legend and the title."""
    ax = ax or new_axes()
    peak = float(np.hypot(ux, uy).max())
    raw = 0.05 * axis.span_m / peak if peak > 0 else 1.0
    scale = float(10 ** np.floor(np.log10(raw)))
    scale *= max(m for m in (1, 2, 5) if m * scale <= raw) if raw >= scale else 1
    moved = np.stack([axis.x + scale * ux, axis.y + scale * uy], axis=-1)
    ax.plot(axis.x, axis.y, color="#999999", lw=1.0, label="axis")
    ax.plot(moved[:, 0], moved[:, 1], lw=1.4, color=PALETTE[0], label=f"deflected, displacements x {scale:g}")
    i = int(np.argmin(np.abs(axis.x - at_x_m)))
    ax.annotate(f"{1000 * abs(uy[i]):.1f} mm {'down' if uy[i] < 0 else 'up'}\nat x = {at_x_m:.2f} m",
                (moved[i, 0], moved[i, 1]), xytext=(0, -28 if uy[i] < 0 else 18), textcoords="offset points",
                ha="center", fontsize=8, bbox={"boxstyle": "round,pad=0.2", "fc": "white", "ec": "#999999"},
                arrowprops={"arrowstyle": "-", "color": "#555555", "lw": 0.8})
    _frame_arch(ax, np.vstack([moved, np.stack([axis.x, axis.y], axis=-1)]), axis.span_m)
    ax.set_title(f"Deflected shape under {state} (displacements x {scale:g})", fontsize=10)
    _legend_below(ax, ncol=2)
    return ax


def plot_collapse(axis: Axis, depth_m: np.ndarray, line: np.ndarray, hinges, factor: float, state: str, ax=None):
    """A no-tension ring at collapse: the ring, the line of thrust at the collapse factor and the
    hinges of the mechanism on the intrados or extrados (``hinges``: (x m, face, crushed depth m)
    triples; with a finite strength the crushed zone is drawn across the joint from the face, and the
    hinge at its middle, where the line of thrust passes)."""
    ax = ax or new_axes()
    outline = _rib(ax, axis, depth_m)
    ax.plot(axis.x, axis.y, color="#999999", lw=0.7, ls=":", label="axis")
    ax.plot(line[:, 0], line[:, 1], color=PALETTE[1], lw=1.4, label="line of thrust at collapse")
    depth = np.broadcast_to(np.asarray(depth_m, dtype=float), axis.x.shape)
    crushed_any = False
    for x_h, face, crushed in hinges:
        i = int(np.argmin(np.abs(axis.x - x_h)))
        sign = 1.0 if face == "extrados" else -1.0
        centre = np.array([axis.x[i], axis.y[i]])
        normal = axis.normal[i]
        face_point = centre + sign * 0.5 * depth[i] * normal
        if crushed > 0:
            crushed_any = True
            inner = centre + sign * (0.5 * depth[i] - crushed) * normal
            ax.plot([face_point[0], inner[0]], [face_point[1], inner[1]], color="#111111", lw=5.0,
                    solid_capstyle="butt", zorder=5)  # over the marker: a few centimetres at the drawing's scale
        point = centre + sign * (0.5 * depth[i] - 0.5 * crushed) * normal
        ax.plot(point[0], point[1], "o", ms=8, mfc="white", mec="black", mew=1.4, zorder=4)
    label = ("hinge (the middle of the crushed zone, where the line passes)" if crushed_any
             else "hinge (where the line touches a face)")
    ax.plot([], [], "o", ms=8, mfc="white", mec="black", mew=1.4, label=label)
    if crushed_any:
        ax.plot([], [], color="#111111", lw=5.0, label="crushed zone at the strength (|N| / (f b) deep)")
    _frame_arch(ax, outline, axis.span_m)
    ax.set_title(f"Collapse of the ring under {state}: load factor {factor:.3g}", fontsize=10)
    _legend_below(ax)
    return ax


# --------------------------------------------------------------------------------- trade studies
STUDY_QUANTITIES = {
    "thrust": ("max_thrust_kN", "largest thrust H (kN)", "Thrust on the abutments", 1.0),
    "moment": ("peak_M_all_kNm", "peak |M| over every combination (kNm)", "Peak bending moment", 1.0),
    "buckling": ("buckling_factor", "least buckling factor (-)", "In-plane buckling factor", 1.0),
    "material": ("weight_kN", "rib weight (t)", "Material in the rib", 1.0 / 9.80665),
}


def plot_study(rows, quantity: str, own_ratio: float | None = None, min_buckling: float | None = None, ax=None):
    """A study quantity against rise/span, one line per (span, depth), drawn from values rounded to
    four significant figures; a quantity that varies less than ``FLAT_TOLERANCE`` is drawn flat and
    labelled constant. The range where the checks pass is shaded, failed points marked, the case
    file's rise/span marked; thrust and material axes start at zero; the buckling plot draws the least
    factor the case asks for."""
    ax = ax or new_axes()
    key, label, title, factor = STUDY_QUANTITIES[quantity]
    series: dict[tuple[float, float], list] = {}
    for r in rows:
        series.setdefault((r.span_m, r.depth_m), []).append(r)
    shaded = marked = False
    constants = []
    for (span, depth), pts in series.items():
        pts = sorted(pts, key=lambda r: r.rise_over_span)
        ratio = np.array([r.rise_over_span for r in pts])
        value = np.array([getattr(r, key) * factor if r.status == "ok" else np.nan for r in pts], dtype=float)
        value[~np.isfinite(value)] = np.nan
        name = f"span {span:g} m, depth {depth:g} m" if len(series) > 1 else f"span {span:g} m"
        if is_flat(value):
            level = float(rounded(np.array([np.nanmean(value)]))[0])
            value = np.where(np.isfinite(value), level, np.nan)
            constants.append(level)
            name += f": constant, {level:g}"
        else:
            value = rounded(value)
        line, = ax.plot(ratio, value, marker="o", ms=3, lw=1.2, label=name)
        passing = ratio[[r.status == "ok" and r.verdict == "pass" for r in pts]]
        if passing.size:
            ax.axvspan(passing.min(), passing.max(), color=line.get_color(), alpha=0.08,
                       label=None if shaded else "checks pass")
            shaded = True
        bad = [r.rise_over_span for r in pts if r.status != "ok"]
        if bad:
            ax.plot(bad, [0.0] * len(bad), "x", color=line.get_color(), transform=ax.get_xaxis_transform(),
                    clip_on=False, label=None if marked else "no axis found (infeasible or failed)")
            marked = True
    if own_ratio is not None:
        ax.axvline(own_ratio, color="k", ls="--", lw=0.8, label=f"case file: rise/span {own_ratio:.3g}")
    if quantity == "buckling" and min_buckling is not None:
        ax.axhline(min_buckling, color=PALETTE[1], lw=1.0, ls="-.", label=f"least factor asked for, {min_buckling:g}")
    if quantity in ("thrust", "material") or (quantity == "buckling" and min_buckling is not None):
        ax.set_ylim(bottom=0.0)
    if constants and len(constants) == len(series):
        span_of = max(abs(c) for c in constants) or 1.0
        ax.set_ylim(min(0.0, min(constants)) - 0.05 * span_of, max(constants) + 0.25 * span_of)
    ax.ticklabel_format(axis="y", useOffset=False, style="plain")
    ax.set_xlabel("rise / span (-)")
    ax.set_ylabel(label)
    ax.set_title(title + (": constant over the sweep" if constants and len(constants) == len(series) else ""),
                 fontsize=10)
    ax.grid(True, lw=0.3, color="#dddddd")
    _legend_below(ax, ncol=2)
    return ax


def plot_pareto(thrust_kN: np.ndarray, moment_kNm: np.ndarray, front: np.ndarray, ratios: np.ndarray, ax=None):
    """Peak moment against thrust for every study point (values as rounded for the table of the
    front), the Pareto front joined (both minimised)."""
    ax = ax or new_axes()
    sc = ax.scatter(thrust_kN, moment_kNm, c=ratios, cmap="viridis", s=16, label="study points")
    ax.figure.colorbar(sc, ax=ax, label="rise / span (-)")
    if front.size:
        ax.plot(thrust_kN[front], moment_kNm[front], color=PALETTE[1], lw=1.2, marker="o", ms=5, mfc="none",
                drawstyle="steps-post" if front.size > 1 else "default",
                label="Pareto front" + (" (a single point: it beats every other)" if front.size == 1 else ""))
    ax.ticklabel_format(useOffset=False, style="plain")
    ax.set_xlim(left=0.0)
    ax.set_xlabel("largest thrust H (kN)")
    ax.set_ylabel("peak |M| over every combination (kNm)")
    ax.set_title("Thrust against bending: the trade-off", fontsize=10)
    ax.grid(True, lw=0.3, color="#dddddd")
    _legend_below(ax, ncol=2)
    return ax


def plot_study_axes(axes, ratios: np.ndarray, ax=None):
    """Every feasible point's found axis, x and y divided by its span, coloured by rise/span."""
    from matplotlib import colormaps
    from matplotlib.cm import ScalarMappable
    from matplotlib.colors import Normalize

    ax = ax or new_axes()
    norm = Normalize(float(np.min(ratios)), float(np.max(ratios)) if np.ptp(ratios) > 0 else float(np.min(ratios)) + 1)
    cmap = colormaps["viridis"]
    for (x, y), r in zip(axes, ratios, strict=True):
        span = x[-1] - x[0]
        ax.plot((x - x[0]) / span, (y - y[0]) / span, lw=0.9, color=cmap(norm(r)))
    ax.figure.colorbar(ScalarMappable(norm=norm, cmap=cmap), ax=ax, label="rise / span (-)")
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel("x / span (-)")
    ax.set_ylabel("y / span (-)")
    ax.set_title("The found axes of every point with an axis, to the span's scale", fontsize=10)
    ax.grid(True, lw=0.3, color="#dddddd")
    place(ax.figure)
    return ax
