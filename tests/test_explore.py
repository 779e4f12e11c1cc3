"""The live page's server (`formfind.explore`), through Werkzeug's test client: every endpoint, bad and
oversized requests, the security rules, and the answers against closed forms and against the library
run on the case file the page saves."""

from __future__ import annotations

import json
import math
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from werkzeug.test import Client

from formfind.errors import CaseError
from formfind.explore.answer import Explorer
from formfind.explore.server import MAX_BODY_BYTES, ExploreApp
from formfind.explore.settings import PageSettings, parse_settings
from formfind.model.case import load_case

ROOT = Path(__file__).resolve().parents[1]
HOST = {"Host": "127.0.0.1:8765"}

# A three-hinged arch under a uniform load per horizontal metre only: form finding is exact and the
# thrust has a closed form (scenario of our own).
DECK = """
[case]
name = "pagetest"
[geometry]
span_m = 30.0
rise_m = 6.0
[supports]
kind = "three_hinged"
[section]
depth_m = 0.5
width_m = 0.4
elastic_modulus_MPa = 30000
[stations]
count = 41
[check]
compression_limit_MPa = 20.0
tension_limit_MPa = 2.0
[[cases]]
name = "deck"
action = "permanent"
  [[cases.loads]]
  type = "line"
  start_kN_m = 20.0
"""
Q, L = 20.0, 30.0


@pytest.fixture(scope="module")
def deck_file(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("page") / "pagetest.toml"
    path.write_text(DECK)
    return path


@pytest.fixture(scope="module")
def deck_explorer(deck_file) -> Explorer:
    return Explorer(deck_file)


@pytest.fixture()
def client(deck_explorer, tmp_path) -> tuple[Client, Path]:
    return Client(ExploreApp(deck_explorer, tmp_path)), tmp_path


def post(client: Client, path: str, body, **headers):
    data = body if isinstance(body, bytes | str) else json.dumps(body)
    return client.post(path, data=data, headers=HOST | {"Content-Type": "application/json"} | headers)


def test_page_and_static_files_are_served(client):
    c, _ = client
    page = c.get("/", headers=HOST)
    assert page.status_code == 200 and page.mimetype == "text/html"
    html = page.get_data(as_text=True)
    assert '<script src="/static/page.js">' in html and "http" not in html.split("<body>")[1].split("</body>")[0]
    for name, kind in (("page.js", "text/javascript"), ("page.css", "text/css")):
        r = c.get(f"/static/{name}", headers=HOST)
        assert r.status_code == 200 and r.mimetype == kind and len(r.data) > 1000
    assert page.headers["X-Content-Type-Options"] == "nosniff"
    assert "script-src 'self'" in page.headers["Content-Security-Policy"]


@pytest.mark.parametrize("path", ["/static/../server.py", "/static/index.html/../../answer.py",
                                  "/static/%2e%2e/settings.py", "/etc/passwd", "/static/"])
def test_no_path_from_the_client_reaches_the_disk(client, path):
    c, _ = client
    r = c.get(path, headers=HOST)
    assert r.status_code == 404
    assert r.json["ok"] is False


def test_wrong_method_is_refused(client):
    c, _ = client
    assert c.get("/api/answer", headers=HOST).status_code == 405
    assert c.post("/", headers=HOST).status_code == 405


def test_start_gives_the_case_own_settings(client):
    c, folder = client
    r = c.get("/api/start", headers=HOST)
    data = r.json
    assert data["ok"] and data["case"] == "pagetest" and data["study"] is None
    s = data["settings"]
    assert (s["rise_m"], s["span_m"], s["depth_m"], s["supports"], s["trial"]) == (6.0, 30.0, 0.5, "three_hinged",
                                                                                  "none")
    r = data["ranges"]["rise_m"]
    assert r["min"] < 6.0 < r["max"]
    assert Path(data["out_folder"]) == folder / "pagetest"
    assert "qualified engineer" in data["caution"]


@pytest.mark.parametrize("rise", [3.0, 6.0, 7.5, 12.0])
def test_thrust_follows_the_rise_by_the_closed_form(client, rise):
    """Three-hinged arch under a uniform load q per horizontal metre: H = q L^2 / (8 f), the beam analogy
    (H = M0 at the crown hinge / rise; e.g. Megson, Structural and Stress Analysis, three-hinged arches;
    from memory). Tolerance 1e-9 relative: the exact path reproduces statics to round-off, and the page
    rounds to 6 significant digits, so compare at 1e-5."""
    c, _ = client
    r = post(c, "/api/answer", {"seq": 1, "settings": {"rise_m": rise}})
    data = r.json
    assert r.status_code == 200 and data["ok"], data
    assert data["summary"]["thrust_kN"] == pytest.approx(Q * L**2 / (8 * rise), rel=1e-5)
    assert data["summary"]["peak_moment_kNm"] < 1e-6 * Q * L**2  # the funicular carries it without bending
    assert data["summary"]["verdict"] in ("pass", "fail")
    assert max(data["axis"]["y_m"]) == pytest.approx(rise, rel=1e-6)
    assert data["seq"] == 1


def test_trial_point_load_adds_its_closed_form_thrust(client):
    """A point load P at x <= L/2 on a three-hinged arch adds H = P x / (2 f) (beam analogy, as above);
    the trial combination holds the permanent case x 1.0 and the trial load x its factor."""
    c, _ = client
    P, x, factor, f = 100.0, 6.0, 1.5, 6.0
    body = {"seq": 1, "settings": {"trial": "point", "trial_kN": P, "trial_x_m": x, "trial_factor": factor}}
    data = post(c, "/api/answer", body).json
    assert data["ok"], data
    expected = Q * L**2 / (8 * f) + factor * P * x / (2 * f)
    assert data["summary"]["thrust_kN"] == pytest.approx(expected, rel=1e-5)
    assert data["moment_kNm"]["trial"] is not None
    assert [line["name"] for line in data["thrust_lines"]][0] == "trial"
    assert any(row["governing"] == "trial" for row in data["checks"])
    # the axis is still found for the case's own load: the trial load bends it
    assert data["summary"]["objective"] < 1e-6 * Q * L**2
    assert data["summary"]["peak_moment_kNm"] > 10.0


def test_shaping_for_the_trial_load_changes_the_axis(client):
    c, _ = client
    trial = {"trial": "line", "trial_kN_m": 30.0, "trial_from_m": 0.0, "trial_to_m": 15.0}
    plain = post(c, "/api/answer", {"seq": 1, "settings": trial}).json
    shaped = post(c, "/api/answer", {"seq": 2, "settings": trial | {"shape_for_trial": True}}).json
    assert plain["ok"] and shaped["ok"]
    assert np.abs(np.array(plain["axis"]["y_m"]) - np.array(shaped["axis"]["y_m"])).max() > 0.01
    # shaped for the deck alone and for deck + half-span load together: minimax over both is > 0
    assert shaped["summary"]["objective"] > 1.0


@pytest.mark.parametrize("settings, key", [
    ({"rise_m": 45.0}, "geometry.rise_m"),  # rise/span 1.5: outside what a case file accepts
    ({"supports": "tied"}, "tie_area_m2"),  # a tied arch needs a tie
    ({"trial": "point", "trial_x_m": 40.0}, "x_m"),  # off the span
    ({"rise_m": "high"}, "rise_m"),
    ({"rise_m": None}, "rise_m"),
    ({"rise_m": True}, "rise_m"),
    ({"depth_m": -0.1}, "depth_m"),
    ({"supports": "glued"}, "supports"),
    ({"colour": "red"}, "colour"),
])
def test_bad_values_are_answered_and_the_server_keeps_serving(client, settings, key):
    c, _ = client
    r = post(c, "/api/answer", {"seq": 1, "settings": settings})
    assert r.status_code == 422
    data = r.json
    assert data["ok"] is False and key in data["error"] and "\n" not in data["error"]
    good = post(c, "/api/answer", {"seq": 2, "settings": {"rise_m": 6.0}})
    assert good.status_code == 200 and good.json["ok"]


@pytest.mark.parametrize("body", [b"{not json", b"[1, 2]", b"\xff\xfe", json.dumps({"seq": "one"}).encode(),
                                  json.dumps({"settings": [1]}).encode()])
def test_unreadable_requests_get_one_line(client, body):
    c, _ = client
    r = post(c, "/api/answer", body)
    assert r.status_code == 422
    assert r.json["ok"] is False and r.json["error"].startswith("page")


def test_oversized_and_foreign_requests_are_refused(client):
    c, _ = client
    big = json.dumps({"seq": 1, "settings": {}, "pad": "x" * (MAX_BODY_BYTES + 10)})
    assert post(c, "/api/answer", big).status_code == 413
    assert post(c, "/api/save", big).status_code == 413
    r = c.post("/api/answer", data=json.dumps({"seq": 1}), headers=HOST | {"Content-Type": "text/plain"})
    assert r.status_code == 415  # a cross-site form cannot send JSON without a preflight
    r = post(c, "/api/answer", {"seq": 1}, Origin="http://evil.example")
    assert r.status_code == 403
    assert post(c, "/api/answer", {"seq": 1}, Origin="http://127.0.0.1:8765").status_code == 200
    r = c.get("/api/start", headers={"Host": "evil.example:8765"})
    assert r.status_code == 421  # DNS rebinding: another name for this address is refused


def test_stale_requests_are_dropped(client):
    c, _ = client
    assert post(c, "/api/answer", {"client": "a", "seq": 7, "settings": {"rise_m": 6.5}}).json["seq"] == 7
    late = post(c, "/api/answer", {"client": "a", "seq": 3, "settings": {"rise_m": 6.1}}).json
    assert late == {"ok": True, "stale": True, "seq": 3}
    # another page (a new tab, a reload) numbers its own requests
    other = post(c, "/api/answer", {"client": "b", "seq": 1, "settings": {"rise_m": 6.1}}).json
    assert other["ok"] and "stale" not in other
    assert post(c, "/api/answer", {"client": "x" * 65, "seq": 1}).status_code == 422


def test_save_writes_a_case_file_that_runs_to_the_same_axis(client):
    c, folder = client
    settings = {"rise_m": 7.0, "span_m": 33.0, "depth_m": 0.6, "trial": "point", "trial_kN": 40.0,
                "trial_x_m": 9.0}
    shown = post(c, "/api/answer", {"seq": 1, "settings": settings}).json
    first = post(c, "/api/save", {"settings": settings}).json
    second = post(c, "/api/save", {"settings": settings}).json
    assert first["ok"] and second["ok"]
    assert first["name"] == "pagetest-explored-001.toml" and second["name"] == "pagetest-explored-002.toml"
    path = Path(first["path"])
    assert path.parent == folder / "pagetest" and path.is_file()
    assert not list(path.parent.glob(".*.part"))
    case = load_case(path)
    assert (case.geometry.span_m, case.geometry.rise_m, case.section.depth_m) == (33.0, 7.0, 0.6)
    assert case.section.second_moment_m4 == pytest.approx(0.4 * 0.6**3 / 12, rel=1e-12)
    from formfind.analysis.engine import analyse
    from formfind.design.shape import find_shape

    shape = find_shape(case)
    result = analyse(case, axis=shape.axis)
    assert np.allclose(shape.axis.y, shown["axis"]["y_m"], rtol=1e-5, atol=1e-9)
    assert float(np.abs(result.combinations.thrust).max()) == pytest.approx(shown["summary"]["thrust_kN"], rel=1e-5)
    assert "qualified engineer" in path.read_text()


def test_save_refuses_a_case_no_file_could_hold(client):
    c, folder = client
    r = post(c, "/api/save", {"settings": {"rise_m": 45.0}})
    assert r.status_code == 422 and "rise_m" in r.json["error"]
    assert not (folder / "pagetest").exists()


def test_dxf_download_holds_the_found_axis(client, tmp_path):
    import ezdxf

    c, _ = client
    r = post(c, "/api/dxf", {"settings": {"rise_m": 7.0}})
    assert r.status_code == 200 and r.mimetype == "application/dxf"
    assert 'filename="pagetest-axis.dxf"' in r.headers["Content-Disposition"]
    path = tmp_path / "axis.dxf"
    path.write_bytes(r.data)
    doc = ezdxf.readfile(path)
    lines = [e for e in doc.modelspace() if e.dxftype() == "LWPOLYLINE"]
    tops = [max(p[1] for p in e.get_points()) for e in lines]
    assert any(math.isclose(t, 7000.0, rel_tol=1e-6) for t in tops)  # the axis, in mm, rises 7 m


def test_a_study_in_the_output_folder_is_offered_as_a_map(client):
    c, folder = client
    (folder / "pagetest").mkdir(parents=True)
    points = [{"point": 0, "span_m": 30.0, "rise_m": 6.0, "rise_over_span": 0.2, "depth_m": 0.5, "status": "ok",
               "peak_M_all_kNm": 1.0, "max_thrust_kN": 375.0, "buckling_factor": 9.0, "worst_utilisation": 0.4,
               "verdict": "pass", "reason": ""}]
    (folder / "pagetest" / "study.json").write_text(json.dumps({"points": points}))
    study = c.get("/api/start", headers=HOST).json["study"]
    assert study and study[0]["span_m"] == 30.0 and study[0]["verdict"] == "pass" and study[0]["reason"] == ""
    (folder / "pagetest" / "study.json").write_text("{broken")
    assert c.get("/api/start", headers=HOST).json["study"] is None


def test_span_scales_the_case_abscissae():
    """A new span scales the hinge and the loads' abscissae, as a trade study does."""
    explorer = Explorer(ROOT / "cases" / "footbridge.toml")
    settings = parse_settings({"span_m": 54.0, "rise_m": 10.8}, explorer.start)
    table = explorer.table_for(settings)
    assert table["supports"]["hinge_x_m"] == pytest.approx(27.0)
    xs = [ld["x_m"] for c in table["cases"] for ld in c["loads"] if ld["type"] == "point"]
    assert min(xs) == pytest.approx(4.5) and max(xs) == pytest.approx(49.5)
    fixed = explorer.table_for(parse_settings({"supports": "fixed"}, explorer.start))
    assert "hinge_x_m" not in fixed["supports"] and fixed["supports"]["kind"] == "fixed"
    # a tube scales similar (D / t kept): A x 4 and I x 16 for twice the diameter
    from formfind.model.case import parse_case

    deeper = parse_case(explorer.table_for(parse_settings({"depth_m": 1.22}, explorer.start)), "x").section
    assert deeper.area_m2 == pytest.approx(explorer.case.section.area_m2 * 4, rel=1e-12)
    assert deeper.second_moment_m4 == pytest.approx(explorer.case.section.second_moment_m4 * 16, rel=1e-12)


def test_settings_reject_what_no_control_can_send():
    start = PageSettings(6.0, 30.0, 0.5, "three_hinged")
    with pytest.raises(CaseError, match="page: rise_m: expected a finite number"):
        parse_settings({"rise_m": float("inf")}, start)
    with pytest.raises(CaseError, match="expected a JSON object"):
        parse_settings([], start)
    assert parse_settings({}, start) == start


def test_explore_command_serves_and_stops_on_ctrl_c(tmp_path, deck_file):
    """The command line: listens on 127.0.0.1, prints the address, serves the page, stops cleanly."""
    import signal
    import urllib.request

    proc = subprocess.Popen([sys.executable, "-m", "formfind", "explore", str(deck_file), "--port", "0",
                             "--no-browser", "--out", str(tmp_path)], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)
    try:
        line = proc.stdout.readline()
        assert "http://127.0.0.1:" in line, (line, proc.stderr.read() if proc.poll() is not None else "")
        url = line.split(" at ")[1].split(" ")[0]
        with urllib.request.urlopen(url + "api/start", timeout=30) as r:
            assert json.load(r)["case"] == "pagetest"
    finally:
        proc.send_signal(signal.SIGINT)
        try:
            out, err = proc.communicate(timeout=30)
        except subprocess.TimeoutExpired:
            proc.kill()
            raise
    assert proc.returncode == 0, err
    assert "stopped" in err and "Traceback" not in err


def test_explore_command_fails_before_listening_on_a_bad_case(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(DECK.replace("span_m = 30.0", "span_m = -3.0"))
    started = time.perf_counter()
    r = subprocess.run([sys.executable, "-m", "formfind", "explore", str(bad), "--no-browser", "--port", "0"],
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 3 and "geometry.span_m" in r.stderr and "Traceback" not in r.stderr
    assert time.perf_counter() - started < 120
    r = subprocess.run([sys.executable, "-m", "formfind", "explore", str(bad), "--port", "70000"],
                       capture_output=True, text=True, timeout=60)
    assert r.returncode == 2 and "--port" in r.stderr


def test_answers_warm_started_from_the_last_one_equal_fresh_answers():
    """Each answer's programs start from the last answer's bases (`remembered_bases`): on the shipped
    footbridge a dragged rise gives the same axis and objective as a fresh page (measured identical;
    1e-9 allows for the solver's round-off)."""
    from dataclasses import replace

    path = Path(__file__).resolve().parents[1] / "cases" / "footbridge.toml"
    dragged = Explorer(path)
    start = dragged.start
    for factor in (1.0, 1.02, 0.98):
        settings = replace(start, rise_m=start.rise_m * factor)
        warm, fresh = dragged.solve(settings), Explorer(path).solve(settings)
        assert warm.shape.value == pytest.approx(fresh.shape.value, rel=1e-9)
        np.testing.assert_allclose(warm.analysis.axis.y, fresh.analysis.axis.y, atol=1e-9 * start.span_m)
    assert dragged._bases  # the programs did leave their bases
