"""Randomized audit of the single-precision build (-DFFWD_SINGLE): inverse dynamics of
every example robot at random states, against double precision.

States: q uniform within each joint's position limits, qd within +-velocity limit,
qdd within +-acceleration limit (all example robots give all three). The states are
rounded to float32 once and the same rounded numbers go to both sides, so the figure
is the library's own arithmetic error, not the rounding of its inputs.

References: the double twin (ffwd's numpy reference) is the reference the reliability
audit names, but it runs ~1.4 ms per call; so every state is compared against the
double C core (`Dynamics(robot, "c")`, equal to the twin to ~1e-15, shown by
tests/test_equivalence.py) and the first FFWD_FLOAT_AUDIT_TWIN_STATES states per robot
(default 2,000) also directly against the twin.

Relative error of one state: max_j |tau_f_j - tau_d_j| / max(max_j |tau_d_j|, floor_j),
floor_j = 1e-3 * joint j's torque limit, so states whose torques all nearly vanish do
not inflate the figure. Bound 1e-4, as in tests/test_float_build.py (float unit
roundoff 6e-8, a few decades lost over <= 16 joints; common practice, no source).

    FFWD_FLOAT_AUDIT_STATES=100000 python -m pytest tests/audit/test_float_audit.py -s

prints one summary line. Default: 2,000 states per robot.
"""
import os
import sys

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(__file__), ".."))

import ffwd  # noqa: E402
from ffwd import Dynamics  # noqa: E402
from test_float_build import REL_TOL, ROBOTS, float_library  # noqa: E402,F401 (fixture)

STATES = int(os.environ.get("FFWD_FLOAT_AUDIT_STATES", "2000"))
TWIN_STATES = int(os.environ.get("FFWD_FLOAT_AUDIT_TWIN_STATES", "2000"))
SEED = int(os.environ.get("FFWD_FLOAT_AUDIT_SEED", "20261202"))
FLOOR = 1e-3          # of each joint's torque limit
CHUNK = 5000          # states per call, to bound memory and show progress


def random_states(robot, rng, count):
    """(q, qd, qdd), each (count, dof), uniform within the joint limits, float32-exact."""
    lim = [j.limits for j in robot.joints]
    for j, L in zip(robot.joints, lim):
        assert L.position and L.velocity and L.acceleration, \
            f"{robot.name}: joint {j.name!r} lacks a position, velocity or acceleration limit"
    lo = np.array([L.position[0] for L in lim])
    hi = np.array([L.position[1] for L in lim])
    v = np.array([L.velocity for L in lim])
    a = np.array([L.acceleration for L in lim])
    n = robot.dof
    q = rng.uniform(lo, hi, (count, n))
    qd = rng.uniform(-v, v, (count, n))
    qdd = rng.uniform(-a, a, (count, n))
    return tuple(x.astype(np.float32).astype(np.float64) for x in (q, qd, qdd))


def relative_errors(got, want, floor):
    """Per state: max |got - want| over joints / max(max |want|, floor_j), worst joint,
    max |want|."""
    size = np.max(np.abs(want), axis=1, keepdims=True)
    rel = np.abs(got - want) / np.maximum(size, floor)
    return rel.max(axis=1), rel.argmax(axis=1), size[:, 0]


def audit_robot(path, float_library, rng, bar):
    robot = ffwd.load(path)
    name = os.path.basename(path)
    tau_max = np.array([j.limits.torque for j in robot.joints], dtype=float)
    floor = FLOOR * tau_max
    flt = float_library.model(robot)
    dbl = Dynamics(robot, "c")
    twin = Dynamics(robot, "twin")
    worst = dict(c=(0.0, name, -1, "", 0.0), twin=(0.0, name, -1, "", 0.0))
    done = 0
    while done < STATES:
        count = min(CHUNK, STATES - done)
        q, qd, qdd = random_states(robot, rng, count)
        got = flt.inverse_dynamics(q, qd, qdd)
        refs = [("c", dbl.inverse_dynamics(q, qd, qdd), count)]
        n_twin = min(count, max(TWIN_STATES - done, 0))
        if n_twin:
            refs.append(("twin", twin.inverse_dynamics(q[:n_twin], qd[:n_twin], qdd[:n_twin]),
                         n_twin))
        for ref, want, m in refs:
            rel, joint, size = relative_errors(got[:m], want, floor)
            k = int(rel.argmax())
            if rel[k] > worst[ref][0]:
                worst[ref] = (float(rel[k]), name, done + k, robot.joints[joint[k]].name,
                              float(size[k]))
        done += count
        bar.update(count)
    return worst, min(STATES, TWIN_STATES)


def test_float_audit(float_library):
    from tqdm import tqdm
    assert ROBOTS, "no example robots in examples/robots"
    assert float_library.real == "float"
    rng = np.random.default_rng(SEED)
    worst = dict(c=(0.0, "", -1, "", 0.0), twin=(0.0, "", -1, "", 0.0))
    per_robot = []
    twin_total = 0
    with tqdm(total=STATES * len(ROBOTS), desc="float audit", file=sys.stderr,
              disable=STATES < 10000) as bar:
        for path in ROBOTS:
            w, n_twin = audit_robot(path, float_library, rng, bar)
            twin_total += n_twin
            per_robot.append(f"{w['c'][1]}: {w['c'][0]:.2g}")
            for ref in worst:
                worst[ref] = max(worst[ref], w[ref])

    def where(w):
        return f"{w[0]:.3g} ({w[1]}, state {w[2]}, joint {w[3]!r}, max |tau| {w[4]:.3g})"

    print(f"\nfloat audit: {STATES * len(ROBOTS)} states ({STATES} per robot, "
          f"{len(ROBOTS)} robots, seed {SEED}); max relative error vs double C core "
          f"{where(worst['c'])}; vs double twin on {twin_total} states {where(worst['twin'])}; "
          f"per robot: {', '.join(per_robot)}")
    for ref in worst:
        assert worst[ref][0] <= REL_TOL, f"float build vs double {ref}: {where(worst[ref])}"
