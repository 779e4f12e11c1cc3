"""The unconstrained three-hinged minimax problem solved exactly, station by station.

With the springings and the hinge fixed and no constraint coupling the stations, minimising the peak
|M| over states separates: at every station i, choose y_i to minimise

    f_i(y) = max_k |a[k, i] - h[k, i] y|,

a convex piecewise-linear function of one variable. Its minimum lies where a rising and a falling
piece cross. Bisection on the sign of a subgradient brackets it (all stations at once, vectorised),
then the two active pieces are intersected exactly. The result minimises the peak at every station,
not only the overall peak.
"""

from __future__ import annotations

import numpy as np


def per_station_minimax(a: np.ndarray, h: np.ndarray, lower: np.ndarray, upper: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Ordinates y (n,) in [lower, upper] minimising max_k |a[k, i] - h[k, i] y_i| at every station.

    Args:
        a: (K, n) moments at y = 0, kNm.
        h: (K, n) horizontal resultants, kN (any sign).
        lower, upper: (n,) bracket of each ordinate, m.

    Returns:
        The ordinates (m) and the minimised peak |M| at each station (kNm).
    """
    a = np.asarray(a, dtype=float)
    h = np.broadcast_to(np.asarray(h, dtype=float), a.shape)
    lo = np.array(lower, dtype=float)
    hi = np.array(upper, dtype=float)
    if np.all(h > 0):
        # every piece's root a/h bounds the minimiser: outside them all pieces rise together
        roots = a / h
        lo = np.clip(roots.min(axis=0), lo, hi)
        hi = np.clip(roots.max(axis=0), lo, hi)

    def slope_sign(y: np.ndarray) -> np.ndarray:
        m = a - h * y[None, :]
        cols = np.arange(m.shape[1])
        k = np.argmax(np.abs(m), axis=0)
        # derivative of |a - h y| is -h sign(a - h y)
        return -h[k, cols] * np.sign(m[k, cols])

    for _ in range(200):
        mid = 0.5 * (lo + hi)
        rising = slope_sign(mid) > 0
        hi = np.where(rising, mid, hi)
        lo = np.where(rising, lo, mid)
        if np.all(hi - lo <= 1e-10 * np.maximum(1.0, np.abs(mid))):
            break  # the polish below intersects the two governing pieces exactly
    y = 0.5 * (lo + hi)
    # polish: intersect the largest rising and falling pieces at the bracket
    m = a - h * y[None, :]
    value = np.abs(m).max(axis=0)
    up_piece = np.where(m >= 0, 1.0, -1.0)  # sign of each piece at y
    slopes = -h * up_piece  # d|M|/dy of each piece
    cand = []
    for sel in (slopes > 0, slopes < 0):
        masked = np.where(sel, np.abs(m), -np.inf)
        cand.append(np.argmax(masked, axis=0))
    cols = np.arange(a.shape[1])
    kr, kf = cand
    sr, sf = up_piece[kr, cols], up_piece[kf, cols]
    # solve sr (a_r - h_r y) = sf (a_f - h_f y)
    denom = sr * h[kr, cols] - sf * h[kf, cols]
    ok = (np.abs(denom) > 0) & np.isfinite(np.abs(m)[kr, cols]) & np.isfinite(np.abs(m)[kf, cols])
    y_exact = np.where(ok, (sr * a[kr, cols] - sf * a[kf, cols]) / np.where(ok, denom, 1.0), y)
    y_exact = np.clip(y_exact, lower, upper)
    value_exact = np.abs(a - h * y_exact[None, :]).max(axis=0)
    better = value_exact <= value
    return np.where(better, y_exact, y), np.where(better, value_exact, value)
