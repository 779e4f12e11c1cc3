"""Diagrams with matplotlib: the axis and its thrust lines, force diagrams, envelopes, influence lines
and buckling modes. Every function takes an optional Axes and returns the Axes it drew on; none calls
``plt.show()`` (no pyplot state is used at all). `save_figure` writes PNG and SVG atomically.

Signs as everywhere in formfind: N tension positive, M positive with the intrados in tension. Force
diagrams drawn along the arch put positive values on the intrados side (the side in tension for M).
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np

from formfind.model.geometry import Axis
from formfind.output.files import write_bytes

UNITS = {"N": "kN", "V": "kN", "M": "kNm"}


def _sentence(text: str) -> str:
    return text[:1].upper() + text[1:]
NAMES = {"N": "axial force N", "V": "shear V", "M": "bending moment M"}


def new_axes(width: float = 9.0, height: float = 4.5):
    """A fresh Figure and Axes (Agg canvas, no pyplot)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height), dpi=110)
    FigureCanvasAgg(fig)
    return fig.add_subplot(1, 1, 1)


def plot_axis(axis: Axis, depth_m: np.ndarray, thrust_lines=(), clearance=(), envelope=(), ax=None):
    """The axis, the rib faces, thrust lines (label, points) and clearance / site lines (m)."""
    ax = ax or new_axes()
    ax.plot(axis.x, axis.y, color="tab:red", lw=1.6, label="axis")
    for face in (axis.intrados(depth_m), axis.extrados(depth_m)):
        ax.plot(face[:, 0], face[:, 1], color="0.35", lw=0.8)
    for label, line in thrust_lines:
        ax.plot(line[:, 0], line[:, 1], ls="--", lw=1.0, label=f"thrust line {label}")
    for polyline, name, style in ((clearance, "clearance", ":"), (envelope, "site envelope", "-.")):
        if polyline:
            p = np.array(polyline)
            ax.plot(p[:, 0], p[:, 1], ls=style, color="tab:purple", lw=1.0, label=name)
    ax.set_aspect("equal", adjustable="datalim")
    ax.set_xlabel("x (m)")
    ax.set_ylabel("y (m)")
    ax.set_title("Arch axis, rib and thrust lines")
    ax.legend(loc="lower center", fontsize=7, ncol=2)
    ax.grid(True, lw=0.3)
    return ax


def plot_along_arch(axis: Axis, values: np.ndarray, effect: str, label: str = "", ax=None, scale: float | None = None):
    """A force diagram drawn along the arch, offset normal to the axis (positive towards the intrados)."""
    ax = ax or new_axes()
    values = np.asarray(values, dtype=float)
    peak = float(np.abs(values).max()) or 1.0
    scale = scale if scale is not None else 0.15 * axis.span_m / peak
    pts = np.stack([axis.x, axis.y], axis=-1)
    tips = pts - axis.normal * (values * scale)[:, None]
    ax.plot(axis.x, axis.y, color="0.2", lw=1.0)
    ax.plot(tips[:, 0], tips[:, 1], lw=1.2, label=label or NAMES[effect])
    for p, t in zip(pts[::max(1, axis.count // 40)], tips[::max(1, axis.count // 40)], strict=True):
        ax.plot([p[0], t[0]], [p[1], t[1]], color="0.6", lw=0.4)
    i = int(np.argmax(np.abs(values)))
    ax.annotate(f"{values[i]:.1f} {UNITS[effect]}", tips[i], fontsize=8)
    ax.set_aspect("equal", adjustable="datalim")
    ax.set_xlabel("x (m)")
    ax.set_ylabel("y (m)")
    ax.set_title(f"{_sentence(NAMES[effect])} along the arch ({UNITS[effect]}; positive on the intrados side)")
    ax.legend(fontsize=7)
    return ax


def plot_against_x(x: np.ndarray, series, effect: str, ax=None):
    """Force diagrams against x: ``series`` is (label, values) pairs."""
    ax = ax or new_axes()
    for label, values in series:
        ax.plot(x, values, lw=1.1, label=label)
    ax.axhline(0.0, color="0.3", lw=0.6)
    ax.set_xlabel("x (m)")
    ax.set_ylabel(f"{effect} ({UNITS[effect]})")
    ax.set_title(f"{_sentence(NAMES[effect])} against x")
    ax.legend(fontsize=7, ncol=2)
    ax.grid(True, lw=0.3)
    return ax


def plot_envelope(x: np.ndarray, maximum: np.ndarray, minimum: np.ndarray, effect: str, label: str, ax=None):
    """The envelope (max and min) of one effect against x, the band between them shaded."""
    ax = ax or new_axes()
    ax.fill_between(x, minimum, maximum, alpha=0.25, label=f"{label} envelope")
    ax.plot(x, maximum, lw=1.0)
    ax.plot(x, minimum, lw=1.0)
    ax.axhline(0.0, color="0.3", lw=0.6)
    ax.set_xlabel("x (m)")
    ax.set_ylabel(f"{effect} ({UNITS[effect]})")
    ax.set_title(f"Envelope of {NAMES[effect]}")
    ax.legend(fontsize=7)
    ax.grid(True, lw=0.3)
    return ax


def plot_influence_line(x: np.ndarray, ordinates: np.ndarray, label: str, unit: str, ax=None):
    """An influence line: the effect for a unit downward load (1 kN) at each abscissa."""
    ax = ax or new_axes()
    ax.plot(x, ordinates, lw=1.2)
    ax.fill_between(x, 0.0, ordinates, alpha=0.2)
    ax.axhline(0.0, color="0.3", lw=0.6)
    ax.set_xlabel("position of a 1 kN load, x (m)")
    ax.set_ylabel(f"{label} ({unit} per kN)")
    ax.set_title(f"Influence line of {label}")
    ax.grid(True, lw=0.3)
    return ax


def plot_buckling_mode(axis: Axis, mode: np.ndarray, factor: float, symmetry: str, ax=None):
    """A buckling mode (stations, 3), scaled to a tenth of the span, over the undeformed axis."""
    ax = ax or new_axes()
    amp = 0.1 * axis.span_m
    ax.plot(axis.x, axis.y, color="0.5", lw=0.9, label="axis")
    ax.plot(axis.x + amp * mode[:, 0], axis.y + amp * mode[:, 1], lw=1.4,
            label=f"mode, factor {factor:.2f} ({symmetry})")
    ax.set_aspect("equal", adjustable="datalim")
    ax.set_xlabel("x (m)")
    ax.set_ylabel("y (m)")
    ax.set_title("In-plane buckling mode (shape only, scaled)")
    ax.legend(fontsize=7)
    return ax


def save_figure(ax, stem: Path) -> list[Path]:
    """Write the Axes' figure as ``stem.png`` and ``stem.svg`` (atomically); return the paths."""
    fig = ax.figure
    fig.tight_layout()
    written = []
    for fmt in ("png", "svg"):
        buf = io.BytesIO()
        fig.savefig(buf, format=fmt, metadata={"Date": None} if fmt == "svg" else None)
        written.append(write_bytes(Path(f"{stem}.{fmt}"), buf.getvalue()))
    return written


STUDY_QUANTITIES = {
    "thrust": ("max_thrust_kN", "largest thrust H (kN)", "Thrust on the abutments"),
    "moment": ("peak_M_all_kNm", "peak |M| over every combination (kNm)", "Peak bending moment"),
    "buckling": ("buckling_factor", "least buckling factor (-)", "In-plane buckling factor"),
    "material": ("volume_m3", "rib volume (m3)", "Material in the rib"),
}


def plot_study(rows, quantity: str, own_ratio: float | None = None, ax=None):
    """A study quantity against rise/span, one line per (span, depth); the range where the checks pass
    shaded; failed points marked on the axis; the case file's own rise/span marked."""
    ax = ax or new_axes()
    key, label, title = STUDY_QUANTITIES[quantity]
    series: dict[tuple[float, float], list] = {}
    for r in rows:
        series.setdefault((r.span_m, r.depth_m), []).append(r)
    shaded = marked = False
    for (span, depth), pts in series.items():
        pts = sorted(pts, key=lambda r: r.rise_over_span)
        ratio = np.array([r.rise_over_span for r in pts])
        value = np.array([getattr(r, key) if r.status == "ok" else np.nan for r in pts], dtype=float)
        value[~np.isfinite(value)] = np.nan
        line, = ax.plot(ratio, value, marker="o", ms=3, lw=1.2,
                        label=f"span {span:g} m, depth {depth:g} m" if len(series) > 1 else f"span {span:g} m")
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
    ax.set_xlabel("rise / span (-)")
    ax.set_ylabel(label)
    ax.set_title(title)
    ax.grid(True, lw=0.3)
    ax.legend(fontsize=7)
    return ax


def plot_pareto(thrust_kN: np.ndarray, moment_kNm: np.ndarray, front: np.ndarray, ratios: np.ndarray, ax=None):
    """Peak moment against thrust for every study point, the Pareto front joined (both minimised)."""
    ax = ax or new_axes()
    sc = ax.scatter(thrust_kN, moment_kNm, c=ratios, cmap="viridis", s=14, label="study points")
    ax.figure.colorbar(sc, ax=ax, label="rise / span (-)")
    if front.size:
        ax.plot(thrust_kN[front], moment_kNm[front], color="tab:red", lw=1.2, drawstyle="steps-post",
                label="Pareto front")
    ax.set_xlabel("largest thrust H (kN)")
    ax.set_ylabel("peak |M| over every combination (kNm)")
    ax.set_title("Thrust against bending: the trade-off")
    ax.grid(True, lw=0.3)
    ax.legend(fontsize=7)
    return ax
