"""Outputs: the DXF drawing round-trips through ezdxf, renders, and matches the axis; diagrams are
not blank; the package writes a manifest with true hashes and never leaves partial files."""

from __future__ import annotations

import hashlib
import io
import json
from dataclasses import replace

import numpy as np
import pytest

from formfind.analysis.engine import analyse
from formfind.enums import DrawingUnit
from formfind.model.case import StationSettings, load_case
from formfind.output import plots
from formfind.output.dxf import LAYERS, DrawingContent, build_drawing, drawing_text, overlap, text_box
from formfind.output.package import build_files, write_package
from formfind.output.tables import setting_out_csv
from tests.conftest import ROOT

SPLINE_TOL_OF_SPAN = 1e-6  # the control-point spline interpolates the stations: distance ~ round-off


@pytest.fixture(scope="module")
def footbridge():
    case = load_case(ROOT / "cases" / "footbridge.toml")
    case = replace(case, stations=StationSettings(41, case.stations.spacing))
    return case, analyse(case)


def _reload(doc):
    import ezdxf

    return ezdxf.read(io.StringIO(drawing_text(doc)))


@pytest.mark.parametrize(("unit", "scale", "insunits"), [(DrawingUnit.MM, 1000.0, 4), (DrawingUnit.M, 1.0, 6)])
def test_dxf_round_trip(footbridge, unit, scale, insunits):
    case, result = footbridge
    axis = result.axis
    content = DrawingContent(case.name, case.title, axis, result.section.depth_m, case.hinge_station(axis))
    doc = _reload(build_drawing(content, unit, "R2010"))
    assert doc.dxfversion == "AC1024"  # R2010
    assert doc.header["$INSUNITS"] == insunits and doc.header["$MEASUREMENT"] == 1
    assert not doc.audit().has_errors
    for layer in LAYERS:
        assert layer.name in doc.layers
    msp = doc.modelspace()
    axis_lines = [e for e in msp.query("LWPOLYLINE") if e.dxf.layer == "FF_AXIS"]
    vertices = np.array([p[:2] for p in axis_lines[0].get_points()])
    np.testing.assert_allclose(vertices, np.stack([axis.x, axis.y], axis=-1) * scale, atol=1e-9 * scale)
    spline = msp.query("SPLINE")[0]
    assert len(spline.fit_points) == 0 and len(spline.control_points) >= axis.count  # control points, not fits
    curve = spline.construction_tool()
    dense = np.array([(v.x, v.y) for v in curve.approximate(20000)])
    a, b = dense[:-1], dense[1:]
    ab = b - a
    for p in np.stack([axis.x, axis.y], axis=-1) * scale:
        # distance to the densely sampled curve, segment by segment (sampling error ~ 1e-9 of the span)
        t = np.clip(np.sum((p - a) * ab, axis=1) / np.sum(ab * ab, axis=1), 0.0, 1.0)
        distance = np.min(np.hypot(*(a + t[:, None] * ab - p).T))
        assert distance <= SPLINE_TOL_OF_SPAN * axis.span_m * scale


def test_dxf_renders_to_a_non_blank_image(footbridge, tmp_path):
    import matplotlib.image
    from ezdxf.addons.drawing import matplotlib as draw

    case, result = footbridge
    axis = result.axis
    doc = build_drawing(DrawingContent(case.name, case.title, axis, result.section.depth_m, None))
    target = tmp_path / "drawing.png"
    draw.qsave(doc.modelspace(), str(target))
    image = matplotlib.image.imread(str(target))
    assert image.std() > 0.01


def test_diagrams_are_not_blank(footbridge, tmp_path):
    import matplotlib.image

    from formfind.output.package import figure_bytes

    case, result = footbridge
    axis = result.axis
    ax = plots.plot_along_arch(axis, result.combinations.M[0], None, "M", "first combination", (100.0, 5.0))
    data = figure_bytes(ax)
    image = matplotlib.image.imread(io.BytesIO(data["png"]))
    assert image.std() > 0.01
    assert data["svg"].decode().lstrip().startswith("<?xml") and "<svg" in data["svg"].decode()
    from formfind.analysis.engine import frame_model
    from formfind.analysis.frame import influence_lines

    il = influence_lines(frame_model(case, axis, result.section))
    ax = plots.plot_influence_line(axis.x, il.M[:, axis.count // 4], "M at the quarter point", "kNm")
    assert ax.get_lines()


def test_package_writes_manifest_with_true_hashes_and_refuses_to_overwrite(footbridge, tmp_path):
    case, result = footbridge
    contents = build_files(case, None, result)
    assert {"axis.dxf", "forces.csv", "fig-axis.png", "fig-axis.svg", "setting-out.csv"} <= set(contents)
    written = write_package(tmp_path / "out", contents, overwrite=False)
    manifest = json.loads((tmp_path / "out" / "manifest.json").read_text())
    for entry in manifest["files"]:
        data = (tmp_path / "out" / entry["name"]).read_bytes()
        assert hashlib.sha256(data).hexdigest() == entry["sha256"] and len(data) == entry["bytes"]
    assert len(written) == len(contents) + 1
    assert not list((tmp_path / "out").glob("*.part"))
    from formfind.errors import OutputError

    with pytest.raises(OutputError, match="--overwrite"):
        write_package(tmp_path / "out", contents, overwrite=False)


def test_setting_out_table_lies_on_the_axis(footbridge):
    case, result = footbridge
    axis = result.axis
    text = setting_out_csv(axis, result.section, interval_m=0.9)  # a station every 0.9 m
    rows = np.array([[float(v) for v in line.split(",")[1:]] for line in text.splitlines()[1:]])
    x, y = rows[:, 0], rows[:, 1]
    assert x[0] == 0.0 and x[-1] == pytest.approx(axis.span_m)
    on_station = np.isin(np.round(x, 3), np.round(axis.x, 3))
    # setting-out is written to the millimetre: half a millimetre either way
    np.testing.assert_allclose(y[on_station], np.interp(x[on_station], axis.x, axis.y), atol=5e-4)
    # depth normal to the axis between intrados and extrados (four coordinates, each to the mm)
    np.testing.assert_allclose(np.hypot(rows[:, 7] - rows[:, 5], rows[:, 8] - rows[:, 6]), rows[:, 4], atol=1.5e-3)
    # multiples of the interval, written exactly: no 0.8999999999999999
    assert [line.split(",")[1] for line in text.splitlines()[1:4]] == ["0.000", "0.900", "1.800"]


def test_every_table_is_free_of_float_artefacts_negative_zero_and_non_finite_values():
    """Numbers for people (common practice, no source): no shortest-repr artefacts such as
    0.8999999999999999, no -0, no inf or nan, in every CSV a run writes (masonry: zero tension limit
    and a ring that cracks, where utilisation and ratios misbehaved before)."""
    import re

    from formfind.design.check import check
    from formfind.design.shape import find_shape

    for name in ("footbridge", "masonry-culvert"):
        case = load_case(ROOT / "cases" / f"{name}.toml")
        case = replace(case, stations=StationSettings(31, case.stations.spacing))
        shape = find_shape(case)
        analysis = analyse(case, axis=shape.axis)
        contents = build_files(case, shape, analysis, all_states=True, checks=check(case, analysis), drawings=False)
        tables = {n: v.decode() for n, v in contents.items() if n.endswith(".csv")}
        assert {"forces.csv", "setting-out.csv", "checks.csv", "states.csv"} <= set(tables)
        for table, text in tables.items():
            for cell in (c for line in text.splitlines()[1:] for c in line.split(",")):
                assert not re.fullmatch(r"-?\d+\.\d{10,}", cell), (table, cell)
                assert not re.fullmatch(r"-0(\.0*)?", cell), (table, cell)
                assert cell.lower() not in ("inf", "-inf", "nan"), (table, cell)


@pytest.mark.parametrize("unit", [DrawingUnit.MM, DrawingUnit.M])
def test_dxf_is_a_drawing_a_drafter_can_use_unchanged(footbridge, unit):
    """Read back: audit clean; the text of every dimension is its measurement in the drawing unit (the
    dimension style's scale is 1); extents set around the geometry; only the styles and line types
    used; every layer with a lineweight; station labels at whole multiples of the interval, none at a
    springing, no two label boxes overlapping; a sheet with the title block filled from [case]; and
    the same bytes twice (common practice for CAD deliverables, no source)."""
    from dataclasses import replace as swap

    import ezdxf

    from formfind.model.case import Document
    from formfind.output.package import drawing_bytes

    case, result = footbridge
    case = swap(case, document=Document("River footpath", "J-1042", "P2", "AB", "CD", "2026-12-01"),
                outputs=swap(case.outputs, drawing_unit=unit))
    data = drawing_bytes(case, result)
    assert data == drawing_bytes(case, result)
    doc = ezdxf.read(io.StringIO(data.decode("utf-8")))
    assert not doc.audit().has_errors
    scale = 1000.0 if unit is DrawingUnit.MM else 1.0
    decimals = 0 if unit is DrawingUnit.MM else 3
    msp = doc.modelspace()
    dims = msp.query("DIMENSION")
    assert len(dims) == 2
    for dim in dims:
        block = doc.blocks.get(dim.dxf.geometry)
        texts = [e.plain_text() for e in block if e.dxftype() == "MTEXT"]
        assert texts == [f"{dim.get_measurement():.{decimals}f}"]
    assert all(d.dxf.dimstyle == "FF_DIM" for d in dims)
    assert [s.dxf.name for s in doc.styles] == ["Standard"]
    assert {lt.dxf.name.upper() for lt in doc.linetypes} == {"BYBLOCK", "BYLAYER", "CONTINUOUS", "DASHED", "DASHDOT"}
    assert {d.dxf.name for d in doc.dimstyles} == {"Standard", "FF_DIM"}
    extmin, extmax = doc.header["$EXTMIN"], doc.header["$EXTMAX"]
    axis = result.axis
    assert extmin[0] <= 0.0 and extmax[0] >= axis.span_m * scale and extmax[1] >= axis.y.max() * scale
    assert abs(extmin[0]) < 1e19 and abs(extmax[1]) < 1e19
    assert all(layer.dxf.lineweight > 0 for layer in doc.layers if layer.dxf.name.startswith("FF_"))
    station_labels = [e for e in msp.query("TEXT") if e.dxf.layer == "FF_STATIONS"]
    xs = sorted(float(e.dxf.text.split("=")[1].split()[0]) for e in station_labels)
    interval = case.outputs.station_label_interval_m
    assert xs and all(abs(x / interval - round(x / interval)) < 1e-9 for x in xs) and 0.0 not in xs
    boxes = [text_box(e.dxf.text, e.dxf.insert[0], e.dxf.insert[1], e.dxf.height, e.dxf.rotation)
             for e in msp.query("TEXT")]
    for i in range(len(boxes)):
        for j in range(i + 1, len(boxes)):
            assert not overlap(boxes[i], boxes[j])
    sheet = doc.layouts.get("Sheet")
    words = " ".join(e.dxf.text for e in sheet.query("TEXT"))
    for value in ("River footpath", "J-1042", "P2", "AB", "CD", "2026-12-01", "1:"):
        assert value in words
    assert sheet.query("VIEWPORT")
