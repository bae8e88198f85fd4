"""Smoke test of `python -m ffwd.demo --quick`: every step runs, the index pages link only
files that exist and show every figure; the scenario's data are sensible."""
import csv
import os
import re

import numpy as np
import pytest

import ffwd
from ffwd import demo

STEP_KEYS = [key for key, *_ in demo.STEPS]


@pytest.fixture(scope="module")
def quick_run(tmp_path_factory, core):
    out = tmp_path_factory.mktemp("demo") / "demo-output"
    rc = demo.main(["--quick", "--out", str(out)])
    return rc, out


def _links(text, pattern):
    return [m for m in re.findall(pattern, text) if not m.startswith(("#", "http:", "https:"))]


def test_quick_demo_runs_every_step(quick_run, capsys):
    rc, out = quick_run
    assert rc == 0, "a demo step failed (see the index page)"
    page = (out / "index.md").read_text()
    for key in STEP_KEYS:
        assert f"## {key}:" in page
        assert (out / key).is_dir() or key in ("00-scenario",)
    assert "FAILED" not in page
    if os.environ.get("FFWD_REQUIRE_BUILD") == "1":     # make test: the full build is there
        assert "not available in this build" not in page


def test_index_links_exist(quick_run):
    _, out = quick_run
    html = (out / "index.html").read_text()
    md = (out / "index.md").read_text()
    targets = _links(html, r"(?:href|src)='([^']+)'") + _links(md, r"\]\(([^)\s]+)\)")
    assert targets, "the index links nothing"
    missing = sorted({t for t in targets if not (out / t).is_file()})
    assert missing == []


def test_index_shows_every_figure(quick_run):
    _, out = quick_run
    html = (out / "index.html").read_text()
    shown = set(re.findall(r"<img src='([^']+)'", html))
    pngs = {p.relative_to(out).as_posix() for p in out.rglob("*.png")}
    assert pngs, "the demo wrote no figure"
    assert pngs <= shown, f"figures not shown on the index: {sorted(pngs - shown)}"


def test_scenario_waypoints_inside_limits():
    robot = ffwd.load(demo.MODEL)
    with open(os.path.join(demo.SCENARIO, "waypoints.csv"), newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == len(demo.WAYPOINT_LABELS)
    t = [float(r["t"]) for r in rows]
    assert t[0] == 0.0 and all(b > a for a, b in zip(t, t[1:]))
    for j, joint in enumerate(robot.joints):
        lo, hi = joint.limits.position
        q = [float(r[f"q_{joint.name}"]) for r in rows]
        assert all(lo < v < hi for v in q), joint.name


def test_override_profile_is_a_drop_and_restore():
    with open(os.path.join(demo.SCENARIO, "override.csv"), newline="") as fh:
        vals = [float(r["override"]) for r in csv.DictReader(fh)]
    assert all(0.0 <= v <= 1.0 for v in vals)
    assert vals[0] == 1.0 and min(vals) == pytest.approx(0.3) and vals[-1] == 1.0


def test_true_arm_differs_only_where_the_scenario_says():
    robot = ffwd.load(demo.MODEL)
    real = demo.true_arm(robot)
    a, b = robot.parameter_vector(), real.parameter_vector()
    changed = sorted({int(i) for i in np.flatnonzero(~np.isclose(a, b, rtol=1e-12, atol=0))})
    last = 13 * (robot.dof - 1)
    j2_viscous, j3_coulomb = 13 * 1 + 11, 13 * 2 + 12
    assert b[j2_viscous] == demo.TRUE_ARM["viscous"]["j2"]
    assert b[j3_coulomb] == demo.TRUE_ARM["coulomb"]["j3"]
    # the heavier payload is lumped into the last body: its mass grows by the difference
    assert b[last] - a[last] == pytest.approx(demo.TRUE_ARM["payload_mass"] - robot.payload.mass)
    assert set(changed) <= {j2_viscous, j3_coulomb} | set(range(last, last + 10))


def test_missing_verb_is_listed_not_failed(tmp_path, capsys):
    """A step whose command is not in the build is reported, the others still run."""
    def ok(d, sec):
        with open(os.path.join(d.folder(sec), "note.txt"), "w") as fh:
            fh.write("ran\n")
        sec.headline = "ran"

    def missing(d, sec):
        d.ffwd(sec, "no-such-verb", "x")

    def broken(d, sec):
        raise ValueError("made to fail")

    steps = [("00-first", "First", "a step that runs", ok),
             ("01-missing", "Missing", "its command is not built", missing),
             ("02-broken", "Broken", "it raises", broken)]
    rc = demo.Demo(str(tmp_path)).run(steps)
    captured = capsys.readouterr()
    assert rc == 1                                   # the broken step fails the demo
    assert "01-missing: not available in this build" in captured.err
    assert "02-broken: ValueError: made to fail" in captured.err
    page = (tmp_path / "index.md").read_text()
    assert "not available in this build" in page and "FAILED" in page
    assert "[note.txt](00-first/note.txt)" in page
    assert "Traceback" in (tmp_path / "02-broken" / "log.txt").read_text()
