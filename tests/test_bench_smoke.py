"""Smoke tests of the benchmark tools: they build, run and report sane structure.
No timed assertion: only that the tools work and that the symbolic yardstick computes
the same torques as ffwd (otherwise the speed comparison would mean nothing)."""
import json
import os
import shutil
import subprocess
import sys

import numpy as np
import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)

import ffwd  # noqa: E402
from bench.chains import random_chain, random_states  # noqa: E402
from bench.symbolic import newton_euler  # noqa: E402

needs_cc = pytest.mark.skipif(shutil.which("cc") is None and shutil.which("gcc") is None,
                              reason="no C compiler")


@pytest.mark.parametrize("dof,prismatic_every", [(2, 0), (3, 2)])
def test_symbolic_matches_twin(dof, prismatic_every):
    # reference: the twin (ffwd.twin.inverse_dynamics), an independent spatial-algebra
    # implementation; the symbolic one is 3-D Newton-Euler (Siciliano et al. 2009, sec 7.5)
    robot = random_chain(dof, seed=dof, prismatic_every=prismatic_every)
    q, qd, qdd = random_states(robot, 3, seed=5)
    from ffwd import twin
    for k in range(3):
        tau_sym = newton_euler.evaluate(robot, q[k], qd[k], qdd[k])
        tau_twin = twin.inverse_dynamics(robot, q[k], qd[k], qdd[k])
        assert np.allclose(tau_sym, tau_twin, rtol=1e-10, atol=1e-9)


def test_symbolic_tree_and_tape_agree():
    robot = random_chain(2, seed=11)
    q, qd, qdd = (np.array([0.3, -1.1]), np.array([0.7, 0.2]), np.array([-2.0, 4.0]))
    a = newton_euler.evaluate(robot, q, qd, qdd, atomize=True)
    b = newton_euler.evaluate(robot, q, qd, qdd, atomize=False)
    assert np.allclose(a, b, rtol=1e-12, atol=1e-10)


def test_symbolic_c_facts():
    robot = random_chain(2, seed=3)
    src, facts = newton_euler.emit_c(robot, function="sym_two")
    assert "void sym_two(const double *q" in src
    assert facts["bytes"] == len(src.encode()) and facts["temporaries"] > 0


@needs_cc
def test_bench_harness_and_symbolic_check(tmp_path):
    from bench import cbuild
    robot = ffwd.load(os.path.join(ROOT, "examples", "robots", "six_axis.toml"))
    src, _ = newton_euler.emit_c(robot)
    exe = cbuild.model_bench(str(tmp_path), robot, "smoke_model", symbolic_source=src)
    check = subprocess.run([exe, "--check"], capture_output=True, text=True)
    assert check.returncode == 0, check.stdout + check.stderr
    assert json.loads(check.stdout)["max_abs_diff"] < 1e-9
    res = subprocess.run([exe, "--functions", "all", "--iterations", "300", "--warmup", "10",
                          "--json"], capture_output=True, text=True)
    assert res.returncode == 0, res.stderr
    data = json.loads(res.stdout)
    names = {r["function"] for r in data["results"]}
    assert {"inverse_dynamics", "gravity", "regressor", "symbolic"} <= names
    for r in data["results"]:
        assert r["status"] == 0
        assert r["min_ns"] <= r["median_ns"] <= r["p99_ns"] <= r["p999_ns"] <= r["max_ns"]
        assert sum(r["histogram"]["counts"]) + r["histogram"]["over"] == r["iterations"]


@needs_cc
def test_builtin_chains_all_sizes(tmp_path):
    from bench import cbuild
    exe = cbuild.builtin_bench(str(tmp_path), max_dof=32)
    res = subprocess.run([exe, "--sizes", "1,7,32", "--iterations", "50", "--warmup", "5",
                          "--functions", "inverse_dynamics,forward_dynamics", "--json"],
                         capture_output=True, text=True)
    assert res.returncode == 0, res.stderr
    dofs = sorted({r["dof"] for r in json.loads(res.stdout)["results"]})
    assert dofs == [1, 7, 32]
    bad = subprocess.run([exe, "--dof", "33"], capture_output=True, text=True)
    assert bad.returncode == 2 and "1..32" in bad.stderr


def test_worst_stack_walks_the_call_graph():
    from bench.embedded import worst_stack
    frames = {"a": 16, "b": 100, "c": 40, "d": 8}
    edges = {"a": {"b", "c"}, "b": {"d", "memset"}, "c": set(), "d": set()}
    total, external, cycles = worst_stack("a", frames, edges)
    assert total == 16 + 100 + 8 and external == ["memset"] and not cycles
    edges["d"] = {"a"}
    assert worst_stack("a", frames, edges)[2]  # recursion is reported


def _arm_image_toolchain():
    """'' when arm-none-eabi-gcc links newlib-nano images here, else why not."""
    if shutil.which("arm-none-eabi-gcc") is None:
        return "arm-none-eabi-gcc not installed (make embedded installs it)"
    r = subprocess.run(["arm-none-eabi-gcc", "-mcpu=cortex-m7", "-mthumb", "-mfloat-abi=hard",
                        "-mfpu=fpv5-d16", "--specs=nano.specs", "-print-file-name=libc_nano.a"],
                       capture_output=True, text=True)
    return "" if os.path.isabs(r.stdout.strip()) else "newlib for arm-none-eabi not installed"


@pytest.mark.skipif(bool(_arm_image_toolchain()), reason=_arm_image_toolchain() or "ok")
def test_linked_images_keep_what_they_call(tmp_path):
    from bench.embedded import compile_core, linked_images
    objs, warnings, errors = compile_core("m7", str(tmp_path))
    assert objs and not errors, errors
    img = linked_images("m7", str(tmp_path), objs)
    assert "error" not in img, img

    def symbols(name):
        out = subprocess.run(["arm-none-eabi-nm", str(tmp_path / f"image_{name}.elf")],
                             capture_output=True, text=True).stdout
        return {line.split()[-1] for line in out.splitlines() if line.strip()}
    ff, gov = symbols("feedforward"), symbols("governor")
    # --gc-sections dropped what the loop does not call, and kept what it does
    assert "ffwd_inverse_dynamics" in ff and "ffwd_governor_step" not in ff
    assert "ffwd_regressor" not in ff and "ffwd_forward_dynamics" not in ff
    assert "ffwd_governor_step" in gov
    assert 0 < img["feedforward"]["text_bytes"] < img["governor"]["text_bytes"]


def test_coverage_ranges():
    from bench.coverage_report import _ranges
    assert _ranges([7, 1, 2, 3, 9, 10]) == "1-3, 7, 9-10"


@needs_cc
def test_latency_cli(tmp_path):
    from ffwd.cli import main
    out = tmp_path / "lat"
    rc = main(["latency", os.path.join(ROOT, "examples", "robots", "planar3_vertical.toml"),
               "--iterations", "200", "--functions", "inverse_dynamics,gravity",
               "--out", str(out)])
    assert rc == 0
    data = json.loads((out / "latency.json").read_text())
    assert [r["function"] for r in data["results"]] == ["inverse_dynamics", "gravity"]
    assert (out / "latency.png").stat().st_size > 1000
    assert "| inverse_dynamics |" in (out / "latency.md").read_text()


def test_latency_cli_bad_iterations(tmp_path, capsys):
    from ffwd.cli import main
    assert main(["latency", "--iterations", "0", "--out", str(tmp_path)]) == 2
    assert "--iterations" in capsys.readouterr().err
