"""Held cycles of the governor: where the window holds the speed, the plan D that the fit
accepts repeats u one cycle before it brakes, so the next cycle may apply that u again
without a check of its own. And the rate of rate across a stop within a cycle."""
import numpy as np
import pytest

from ffwd import Dynamics
from ffwd.scaling import Governor, Path
from ffwd.twin import governor as twin_gov
from test_governor import audit_scenario, c_backend, check_run, random_arm, steps, with_feasible_limits  # noqa: F401


def window_bound_scenario():
    # a short window at a fine spacing and jerk limits: the window holds the speed
    robot, rng = random_arm(0, 2)
    path = Path.from_waypoints(np.array([0.0, 0.25, 0.5]), rng.uniform(-1, 1, (3, 2)))
    return with_feasible_limits(robot, path, rng, jerk=True), path


def test_held_cycles_repeat_u_without_a_check(monkeypatch):
    robot, path = window_bound_scenario()
    log, calls = [], [0]
    decel_cycles, step = twin_gov.GovernorTwin.decel_cycles, twin_gov.GovernorTwin.step

    def counting_decel_cycles(self, *args, **kw):
        calls[0] += 1
        return decel_cycles(self, *args, **kw)

    def logging_step(self, cmd):
        calls[0] = 0
        pending, u_before = self.hold_left, self.u
        out = step(self, cmd)
        log.append((pending, u_before, out["rate"], calls[0], self.hold_left))
        return out

    monkeypatch.setattr(twin_gov.GovernorTwin, "decel_cycles", counting_decel_cycles)
    monkeypatch.setattr(twin_gov.GovernorTwin, "step", logging_step)
    gov = Governor(robot, path, horizon=16, dt=0.004, ds=0.01, backend="twin",
                   dynamics=Dynamics(robot, backend="c"))
    run = gov.run(1.0)
    check_run(robot, path, run, gov)
    held = [e for e in log if e[0] > 0 and e[2] == e[1] and e[3] == 0]
    checked = [e for e in log if e[3] > 0]
    # the window bounds the speed on most of this path: about every other cycle is held
    assert len(held) > 0.25 * len(log), (len(held), len(log))
    assert len(checked) < 0.75 * len(log), (len(checked), len(log))
    # a held cycle is only ever the one cycle its plan vouched for: none follows another
    # held cycle, and each consumed the plan's hold
    for i, e in enumerate(log):
        if e[0] > 0 and e[3] == 0:
            assert e[2] == e[1] and e[4] == 0
            assert log[i - 1][0] == 0


def test_held_u_is_not_kept_when_the_command_drops(c_backend):
    # the command drops to 0 % where the window holds the speed: the governor brakes
    # (the tracker asks for less than the held u, so it is checked as usual) and stops
    robot, path = window_bound_scenario()
    gov = Governor(robot, path, horizon=16, dt=0.004, ds=0.01, backend=c_backend)
    run = gov.run(steps([0.0, 0.3, 0.6], [1.0, 0.0, 1.0]))
    check_run(robot, path, run, gov)
    drop = np.searchsorted(run.t, 0.3)
    assert run.rate[drop + 1] < run.rate[drop - 1]
    assert np.any(run.override[(run.t > 0.3) & (run.t < 0.6)] == 0.0)


def test_rate_of_rate_across_a_stop_within_a_cycle(c_backend):
    # found by a governor audit (tests/audit, seed 30000272): near the path's end a plan D
    # comes to rest within a cycle at u < 0 and the command (30 %) starts it again at once;
    # the next cycle's u must be within one cycle's rate of rate of the u the stopping
    # cycle applied, not of 0 (check_run: 1.3 % over the bound before the fix)
    robot, path, gov, command, _ = audit_scenario(30000272, c_backend)
    assert (robot.dof, gov.horizon, gov.dt) == (4, 16, 0.002)   # the scenario the audit drew
    run = gov.run(command)
    check_run(robot, path, run, gov)
    stops = np.flatnonzero((run.override[:-1] > 0) & (run.override[1:] == 0) & (run.rate[:-1] < 0))
    assert len(stops) > 0          # it does come to rest within a cycle
