"""Randomized audit of the C governor: random robots (1-6 joints), paths and override
commands (steps between 0 % and the maximum at random times); every run must reach
the end at rest with zero torque, velocity and acceleration violations, recomputed
from its commanded q, qd, qdd by the inverse dynamics (friction included), with the
override's rate of rate and every joint's jerk (change of the commanded qdd per cycle)
within their bounds at every cycle, and with the robot able to stop inside the window
(checked offline at a few cycles per run).

    FFWD_AUDIT_RUNS=10000 python -m pytest tests/audit/test_governor_audit.py -s

prints a summary line (runs, cycles, violations, flagged cycles). Default: 20 runs.
"""
import os
import sys

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(__file__), ".."))

from ffwd.scaling.check import can_stop, violations  # noqa: E402
from ffwd.scaling.governor import _c_available  # noqa: E402
from test_governor import audit_scenario, require_build  # noqa: E402

RUNS = int(os.environ.get("FFWD_AUDIT_RUNS", "20"))
SEED = int(os.environ.get("FFWD_AUDIT_SEED", "20261202"))


def one_run(seed):
    robot, path, gov, command, rng = audit_scenario(seed)
    dt = gov.dt
    # a short window at a fine spacing makes the governor crawl (it must be able to stop
    # within a few milliseconds of path): give such runs time to reach the end
    run = gov.run(command, max_time=60.0 + 400.0 * path.duration)
    v = violations(robot, run.q, run.qd, run.qdd)
    # (b): the rate of rate and each joint's jerk (change of the commanded qdd per cycle)
    rr = np.abs(np.diff(np.concatenate([[0.0], run.rate]))) / dt / gov.rate_rate_max
    jm = np.array([j.limits.jerk if j.limits.jerk else np.inf for j in robot.joints])
    jr = (np.abs(np.diff(run.qdd, axis=0)) / dt / jm).max() if len(run.t) > 1 else 0.0
    v["jerk_worst"], v["rate_rate_worst"] = float(jr), float(rr.max())
    v["jerk"] = int(jr > 1.0 + 1e-9) + int(rr.max() > 1.0 + 1e-9)
    bad = (v["torque"] + v["velocity"] + v["acceleration"] + v["jerk"]
           + (0 if run.done else 1))
    stop_fail = 0
    for i in rng.choice(len(run.t), size=min(2, len(run.t)), replace=False):
        ok, _ = can_stop(robot, path, run.s[i], run.override[i], run.window_end[i],
                         grid_step=gov.ds / 2)
        stop_fail += 0 if ok else 1
    return bad, stop_fail, len(run.t), int(np.count_nonzero(run.flags & 8)), v


def test_governor_audit():
    if not _c_available():
        require_build("ffwd._governor is not importable (run `make install`)")
    from tqdm import tqdm
    total = dict(runs=0, cycles=0, violations=0, stop_failures=0, jerk_flagged=0)
    worst = dict(torque=0.0, velocity=0.0, acceleration=0.0, jerk=0.0, rate_rate=0.0)
    failures = []
    for r in tqdm(range(RUNS), desc="governor audit", file=sys.stderr, disable=RUNS < 50):
        bad, stop_fail, cycles, jerk, v = one_run(SEED + r)
        total["runs"] += 1
        total["cycles"] += cycles
        total["violations"] += bad
        total["stop_failures"] += stop_fail
        total["jerk_flagged"] += jerk
        for k in worst:
            worst[k] = max(worst[k], v[f"{k}_worst"])
        if bad or stop_fail:
            failures.append(SEED + r)
        if RUNS >= 1000 and (r + 1) % 500 == 0:
            print(f"governor audit after {r + 1} runs: {total}, worst {worst}, "
                  f"failing seeds {failures[:10]}", file=sys.stderr, flush=True)
    print(f"\ngovernor audit: {total}, worst limit ratios {worst}, failing seeds {failures[:10]}")
    assert total["violations"] == 0 and total["stop_failures"] == 0, failures[:10]
