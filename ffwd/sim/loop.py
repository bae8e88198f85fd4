"""Run the fixed-rate loop program `ffwd-loop` and read its JSON.

`run_loop(robot, path, ...)` writes the controller's (and the plant's) flat model and
the reference CSV into a temporary folder, runs ffwd-loop, and returns its JSON as a
dict (see docs/sim.md for the fields). `find_program(name)` locates the programs
built with the package.
"""
import json
import os
import shutil
import subprocess
import sys
import sysconfig
import tempfile
from pathlib import Path

import numpy as np

from .flatmodel import mismatched, write_model_file
from .reference import as_reference, demo_path

__all__ = ["find_program", "write_loop_trajectory", "run_loop"]


def find_program(name):
    """Path of the program `name` (e.g. "ffwd-loop"): $FFWD_BIN_DIR, the package's bin/
    folder, the interpreter's scripts folder, PATH, then the repository's build folders.
    Raises FileNotFoundError naming where it looked."""
    here = Path(__file__).resolve().parent.parent          # the ffwd package
    places = []
    if os.environ.get("FFWD_BIN_DIR"):
        places.append(Path(os.environ["FFWD_BIN_DIR"]))
    places.append(here / "bin")
    for key in ("platlib", "purelib"):
        places.append(Path(sysconfig.get_paths()[key]) / "ffwd" / "bin")
    places.append(Path(sysconfig.get_paths()["scripts"]))
    places.append(Path(sys.prefix) / "bin")
    for place in places:
        exe = place / name
        if exe.is_file() and os.access(exe, os.X_OK):
            return str(exe)
    found = shutil.which(name)
    if found:
        return found
    root = here.parent
    for exe in sorted(root.glob(f"build/*/{name}")) + sorted(root.glob(f"build/{name}")):
        if exe.is_file() and os.access(exe, os.X_OK):
            return str(exe)
    raise FileNotFoundError(f"program {name!r} not found (looked in $FFWD_BIN_DIR, "
                            f"{here / 'bin'}, the Python scripts folder, PATH and "
                            f"{root / 'build'}); build the package (make install)")


def write_loop_trajectory(ref, path):
    """Write a Reference as the CSV ffwd-loop reads: t, q_1..q_n, qd_1..qd_n, qdd_1..qdd_n."""
    n = ref.q.shape[1]
    cols = ["t"] + [f"{p}_{j}" for p in ("q", "qd", "qdd") for j in range(n)]
    data = np.column_stack([ref.t, ref.q, ref.qd, ref.qdd])
    with open(path, "w") as fh:
        fh.write(",".join(cols) + "\n")
        for row in data:
            fh.write(",".join(f"{v:.17g}" for v in row) + "\n")
    return path


def run_loop(robot, path=None, *, plant=None, mismatch=0.0, rate_hz=1000.0, mode="both",
             gains=None, integrator="rk4", substeps=1, delay=0, counts_per_rev=0.0,
             noise_q=0.0, noise_qd=0.0, seed=1, saturate=True, settle=0.25, cpu=None,
             rt_priority=None, mlock=False, free_run=False, hist_bin_us=1.0, exe=None,
             timeout=None):
    """Run ffwd-loop on `robot` (the controller's model) and return its JSON as a dict.
    Arguments as in ffwd.sim.track; cpu / rt_priority / mlock ask the OS for real-time
    treatment (the JSON's "realtime" part says what was granted)."""
    rate_hz = float(rate_hz)
    if not 250.0 <= rate_hz <= 8000.0:
        raise ValueError(f"rate_hz: ffwd-loop runs at 250..8000 Hz, got {rate_hz}")
    if mode not in ("both", "pd", "ff"):
        raise ValueError(f"mode: must be both, pd or ff, got {mode!r}")
    ref = demo_path(robot, rate_hz) if path is None else as_reference(path, rate_hz)
    exe = exe or find_program("ffwd-loop")
    with tempfile.TemporaryDirectory(prefix="ffwd-loop-") as tmp:
        model_file = write_model_file(robot, os.path.join(tmp, "model.txt"))
        traj_file = write_loop_trajectory(ref, os.path.join(tmp, "reference.csv"))
        out_file = os.path.join(tmp, "loop.json")
        cmd = [exe, "--model", model_file, "--traj", traj_file, "--rate", repr(rate_hz),
               "--mode", mode, "--integrator", integrator, "--substeps", str(int(substeps)),
               "--delay", str(int(delay)), "--counts", repr(float(counts_per_rev)),
               "--noise-q", repr(float(noise_q)), "--noise-qd", repr(float(noise_qd)),
               "--seed", str(int(seed)), "--settle", repr(float(settle)),
               "--hist-bin-us", repr(float(hist_bin_us)), "--json", out_file]
        plant_robot = mismatched(plant if plant is not None else robot, mismatch)
        if plant_robot is not robot:
            cmd += ["--plant-model", write_model_file(plant_robot, os.path.join(tmp, "plant.txt"))]
        if gains is not None:
            kp, kd = (np.broadcast_to(np.asarray(g, float), (robot.dof,)) for g in gains)
            cmd += ["--kp", ",".join(repr(float(v)) for v in kp),
                    "--kd", ",".join(repr(float(v)) for v in kd)]
        if not saturate:
            cmd.append("--no-saturation")
        if cpu is not None:
            cmd += ["--cpu", str(int(cpu))]
        if rt_priority is not None:
            cmd += ["--rt-priority", str(int(rt_priority))]
        if mlock:
            cmd.append("--mlock")
        if free_run:
            cmd.append("--free-run")
        proc = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout)
        if proc.returncode != 0:
            msg = proc.stderr.strip().splitlines()
            raise RuntimeError(f"ffwd-loop failed (exit {proc.returncode}): "
                               f"{msg[-1] if msg else 'no message'}")
        with open(out_file) as fh:
            result = json.load(fh)
    result["notes"] = [line for line in proc.stderr.splitlines() if line.strip()]
    return result
