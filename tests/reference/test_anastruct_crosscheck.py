"""Cross-check of the frame engine against anaStruct, a general-purpose 2D frame library from PyPI.

Both are fed identical geometry: station coordinates rounded to single precision first, because
anaStruct keeps element lengths in float32; with that, agreement is about 1e-8 relative, and the test
asks for the 1e-6 the issue sets. anaStruct reports node results as the force on the support (the
opposite of our reactions, which are forces on the arch) and its bending moment with the opposite
sign to ours (we take tension on the intrados as positive); both are converted here.
"""

from __future__ import annotations

import numpy as np
import pytest

anastruct = pytest.importorskip("anastruct")

from formfind.analysis.frame import build_frame, solve  # noqa: E402
from formfind.enums import SupportKind  # noqa: E402
from formfind.model.geometry import Axis  # noqa: E402
from formfind.model.loads import LoadCase, PointLoad, case_station_loads  # noqa: E402
from formfind.model.section import Section  # noqa: E402

RTOL = 1e-6
EA, EI = 1.2e6, 3.0e4


@pytest.mark.parametrize("kind", ["hinged", "fixed"])
def test_reactions_and_moments_match_anastruct(kind):
    span, rise, n = 24.0, 6.0, 24
    x = np.linspace(0.0, span, n + 1)
    y = (4 * rise * x * (span - x) / span**2).astype(np.float32).astype(float)
    loads = [(5, 0.0, -40.0), (9, 6.0, -25.0), (17, 0.0, -60.0)]  # (station, Fx right, Fy up)

    ss = anastruct.SystemElements(EA=EA, EI=EI)
    for i in range(n):
        ss.add_element([[x[i], y[i]], [x[i + 1], y[i + 1]]], EA=EA, EI=EI)
    getattr(ss, f"add_support_{kind}")(1)
    getattr(ss, f"add_support_{kind}")(n + 1)
    for station, fx, fy in loads:
        ss.point_load(station + 1, Fx=fx, Fy=fy)
    ss.solve()

    axis = Axis(x, y, np.zeros_like(x))
    section = Section(area_m2=EA / 2e8, second_moment_m4=EI / 2e8, depth_m=0.5, elastic_modulus_kN_m2=2e8).at(axis)
    case = LoadCase("p", tuple(PointLoad(float(x[s]), -fy, fx) for s, fx, fy in loads))
    ours = solve(build_frame(axis, section, SupportKind.TWO_HINGED if kind == "hinged" else SupportKind.FIXED),
                 case_station_loads(case, axis, section))

    left, right = ss.get_node_results_system(1), ss.get_node_results_system(n + 1)
    theirs = -np.array([[left["Fx"], left["Fy"], left["Tz"]], [right["Fx"], right["Fy"], right["Tz"]]])
    scale = np.abs(ours.reactions[0]).max()
    np.testing.assert_allclose(ours.reactions[0], theirs, atol=RTOL * scale)
    # moment at the start of every element, sign converted
    m_theirs = np.array([-ss.get_element_results(e + 1, verbose=True)["M"][0] for e in range(n)])
    np.testing.assert_allclose(ours.M[0, :-1], m_theirs, atol=RTOL * np.abs(m_theirs).max())
