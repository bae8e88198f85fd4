"""`python -m ffwd.demo`: the whole ffwd workflow on one invented pick-and-place cell.

    python -m ffwd.demo [--out demo-output] [--quick] [--only 02,04]

The scenario (examples/scenario/README.md): the invented six-axis arm
examples/robots/six_axis.toml moves a cast part from an inbound tray to a machining
fixture, lifting it over a guard wall on the way. Each step runs the same `ffwd` command
a user would type (ffwd.cli.main), writes into its own folder of the output directory
and adds a section with its key figures to index.html and index.md:

    00-scenario        the move: waypoints, sampled trajectory, tool path figure
    01-check           ffwd check: validate and describe the model
    02-feedforward     ffwd torques: feedforward torques along the move, their parts
    03-time-optimal    ffwd scale: the fastest motion along the path and its active limits
    04-governor        ffwd govern: override dropped to 30 % and restored mid-motion
    05-manipulability  ffwd manip: manipulability along the path
    06-identification  ffwd identify: excitation, synthetic logs of the "real" arm, fit
    07-latency         ffwd latency: per-call latency of the C core
    08-simulation      ffwd simulate track: PD vs PD + feedforward on the simulated arm

A step whose command is not in this build is listed as "not available in this build".
--quick uses small grids and short runs (for the smoke test). Exit code 0 when every
step ran, 1 when one failed.
"""
from __future__ import annotations

import argparse
import contextlib
import csv
import html
import importlib.util
import io
import json
import os
import shlex
import shutil
import sys
import time
import traceback
from dataclasses import dataclass, field

import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
MODEL = os.path.join(ROOT, "examples", "robots", "six_axis.toml")
SCENARIO = os.path.join(ROOT, "examples", "scenario")

# waypoint names, in the order of examples/scenario/waypoints.csv
WAYPOINT_LABELS = ("pick at tray", "lifted", "over the guard wall", "above fixture",
                   "place in fixture")
STORY = ("Cell 4 of an invented valve foundry deburrs cast valve bodies: its "
         "six-axis arm (the made-up model examples/robots/six_axis.toml, a 5 kg gripper "
         "and part at the flange) picks each body from the inbound tray on its right, lifts "
         "it over a guard wall and sets it into the deburring fixture on its left, a "
         "3.6 s move at nominal speed. The demo checks the model, computes the feedforward "
         "of the move, finds its fastest timing, drops the speed override to 30 % for an "
         "operator mid-motion, inspects manipulability, identifies the real arm (a heavier "
         "part, stiffer j2 and j3 drives) from a synthetic log, measures latency and "
         "closes the loop on the simulated arm.")
# the "real" arm of the cell differs from the catalogue model in these ways
TRUE_ARM = {"payload_mass": 6.5, "viscous": {"j2": 13.0}, "coulomb": {"j3": 15.0}}
TORQUE_NOISE = 1.0   # N m, sd of the synthetic torque measurements


class NotAvailable(Exception):
    """The command a step needs is not in this build."""


@dataclass
class Section:
    key: str
    title: str
    intro: str
    status: str = "ok"                     # ok | failed | unavailable
    reason: str = ""
    commands: list = field(default_factory=list)
    numbers: list = field(default_factory=list)     # (label, value text)
    figures: list = field(default_factory=list)     # (relative path, caption)
    notes: list = field(default_factory=list)
    seconds: float = 0.0
    cpu: float = 0.0                       # CPU seconds, this process and its children
    headline: str = ""


class Demo:
    def __init__(self, out, quick=False, model=MODEL):
        self.out = out
        self.quick = quick
        self.model = model
        self.sections = []
        self.data = {}          # values steps hand on to later steps

    # ---- helpers
    def rel(self, path):
        """A path as the user would type it from the current directory."""
        try:
            r = os.path.relpath(path)
        except ValueError:
            return path
        return path if r.startswith(".." + os.sep + "..") else r

    def folder(self, sec):
        d = os.path.join(self.out, sec.key)
        os.makedirs(d, exist_ok=True)
        return d

    def ffwd(self, sec, *argv, ok=(0,)):
        """Run one `ffwd` verb through ffwd.cli.main; its output goes to <step>/log.txt.
        Returns (exit code, stdout text)."""
        verb = argv[0]
        if importlib.util.find_spec(f"ffwd.cli.{verb}") is None:
            raise NotAvailable(f"the `ffwd {verb}` command is not in this build")
        from .cli import main
        argv = [str(a) for a in argv]
        sec.commands.append("ffwd " + " ".join(shlex.quote(a) for a in argv))
        buf_out, buf_err = io.StringIO(), io.StringIO()
        with contextlib.redirect_stdout(buf_out), contextlib.redirect_stderr(buf_err):
            try:
                rc = main(argv)
            except SystemExit as exc:        # argparse usage errors
                rc = exc.code if isinstance(exc.code, int) else 2
        text = buf_out.getvalue()
        log = os.path.join(self.folder(sec), "log.txt")
        with open(log, "a", encoding="utf-8") as fh:
            fh.write(f"$ {sec.commands[-1]}\n{text}{_clean_bars(buf_err.getvalue())}"
                     f"[exit code {rc}]\n\n")
        if rc not in ok:
            last = [ln for ln in _clean_bars(buf_err.getvalue()).splitlines() if ln.strip()]
            raise RuntimeError(f"`{sec.commands[-1]}` exited with {rc}"
                               + (f": {last[-1]}" if last else ""))
        return rc, text

    def figure(self, sec, name, caption):
        path = os.path.join(self.out, sec.key, name)
        if os.path.exists(path):
            sec.figures.append((f"{sec.key}/{name}", caption))
        else:
            sec.notes.append(f"expected figure {name} was not written")

    # ---- running
    def run(self, steps, only=None):
        t_all, c_all = time.perf_counter(), _cpu()
        os.makedirs(self.out, exist_ok=True)
        print(f"ffwd demo: {len(steps)} steps into {self.out}/"
              + (" (quick)" if self.quick else ""))
        for i, (key, title, intro, fn) in enumerate(steps):
            sec = Section(key, title, intro)
            self.sections.append(sec)
            if only and key[:2] not in only and key[:2] != "00":
                sec.status, sec.reason = "skipped", "not selected with --only"
                continue
            print(f"[{i}/{len(steps) - 1}] {title} ...", end=" ", flush=True)
            shutil.rmtree(os.path.join(self.out, key), ignore_errors=True)   # no stale files
            t0, c0 = time.perf_counter(), _cpu()
            try:
                fn(self, sec)
            except NotAvailable as exc:
                sec.status, sec.reason = "unavailable", str(exc)
            except Exception as exc:      # noqa: BLE001 - the demo goes on, the page says why
                sec.status, sec.reason = "failed", f"{type(exc).__name__}: {exc}"
                with open(os.path.join(self.folder(sec), "log.txt"), "a") as fh:
                    fh.write(traceback.format_exc())
            sec.seconds, sec.cpu = time.perf_counter() - t0, _cpu() - c0
            if sec.status == "ok":
                print(f"{sec.seconds:.1f} s (CPU {sec.cpu:.1f} s)"
                      + (f": {sec.headline}" if sec.headline else ""))
            elif sec.status == "unavailable":
                print("not available in this build")
                print(f"ffwd demo: {key}: not available in this build ({sec.reason})",
                      file=sys.stderr)
            else:
                print(f"FAILED after {sec.seconds:.1f} s")
                print(f"ffwd demo: {key}: {sec.reason} (see {self.out}/{key}/log.txt)",
                      file=sys.stderr)
        self.total = time.perf_counter() - t_all
        self.total_cpu = _cpu() - c_all
        write_index(self)
        print(f"total {self.total:.1f} s ({self.total_cpu:.1f} s of CPU); open "
              f"{os.path.join(self.out, 'index.html')}")
        return 1 if any(s.status == "failed" for s in self.sections) else 0


def _cpu():
    t = os.times()
    return t.user + t.system + t.children_user + t.children_system


def _clean_bars(text):
    """Keep the final state of progress-bar lines (drop carriage-return redraws)."""
    out = []
    for line in text.splitlines():
        parts = [p for p in line.split("\r") if p.strip()]
        if parts:
            out.append(parts[-1].rstrip())
    return "\n".join(out) + ("\n" if out else "")


def _small(x):
    """A non-negative error: 3 significant digits, 0 below round-off."""
    return "0" if x < 1e-12 else f"{x:.3g}"


def _fmt(x, digits=3):
    return f"{x:.{digits}g}"


# ---------------------------------------------------------------- 00 scenario
def step_scenario(demo, sec):
    import ffwd
    from .plots.demo import plot_scenario
    from .scaling import Path
    from .trajio import read_trajectory, write_trajectory
    robot = ffwd.load(demo.model)
    demo.robot = robot
    d = demo.folder(sec)
    way = read_trajectory(os.path.join(SCENARIO, "waypoints.csv"), robot.joint_names)
    path = Path.from_waypoints(way.t, way.q, kind="quintic", joint_names=robot.joint_names)
    demo.data["path"] = path
    rate = 1000.0
    t = np.linspace(0.0, path.duration, int(round(path.duration * rate)) + 1)
    q, qd, qdd = path.q(t), path.dq(t), path.ddq(t)
    traj = os.path.join(d, "pick_place.csv")
    write_trajectory(traj, t, robot.joint_names, q, qd, qdd)
    demo.data["trajectory"] = traj
    every = int(round(rate / 50.0))
    traj50 = os.path.join(d, "pick_place_50hz.csv")
    write_trajectory(traj50, t[::every], robot.joint_names, q[::every], qd[::every], qdd[::every])
    demo.data["trajectory_50hz"] = traj50
    dyn = ffwd.Dynamics(robot, backend="twin")
    tool = np.array([dyn.tool_pose(x)[:3, 3] for x in q[::10]])
    way_xyz = np.array([dyn.tool_pose(x)[:3, 3] for x in way.q])
    plot_scenario(robot, t, q, tool, way.t, way_xyz, WAYPOINT_LABELS,
                  os.path.join(d, "scenario.png"),
                  f"{robot.name}: the pick-and-place move of the demo cell "
                  f"({path.duration:g} s nominal, quintic spline through 5 waypoints)")
    demo.figure(sec, "scenario.png", "The move: tool path and joint positions")
    rows = ["| # | waypoint | t [s] | " + " | ".join(robot.joint_names) + " | tool x, y, z [m] |",
            "|---|---|---|" + "---|" * robot.dof + "---|"]
    for k, lab in enumerate(WAYPOINT_LABELS):
        rows.append(f"| {k} | {lab} | {way.t[k]:g} | "
                    + " | ".join(f"{v:.2f}" for v in way.q[k]) + " | "
                    + ", ".join(f"{v:.3f}" for v in way_xyz[k]) + " |")
    sec.notes.append("\n".join(rows))
    lim_v = np.array([j.limits.velocity for j in robot.joints])
    lim_a = np.array([j.limits.acceleration for j in robot.joints])
    sec.numbers += [
        ("nominal duration", f"{path.duration:g} s"),
        ("samples written", f"{len(t)} at {rate:g} Hz (pick_place.csv: t, q, qd, qdd; "
                            "every 20th in pick_place_50hz.csv)"),
        ("tool travel", f"{np.sum(np.linalg.norm(np.diff(tool, axis=0), axis=1)):.2f} m"),
        ("largest velocity / limit", _worst(robot, np.abs(qd).max(0) / lim_v)),
        ("largest acceleration / limit", _worst(robot, np.abs(qdd).max(0) / lim_a)),
    ]
    sec.commands.append("(python) Path.from_waypoints(examples/scenario/waypoints.csv, "
                        "kind='quintic') sampled at 1 kHz")
    sec.headline = f"{path.duration:g} s move through {len(way.t)} waypoints"


def _worst(robot, ratios):
    j = int(np.argmax(ratios))
    return f"{ratios[j]:.2f} ({robot.joint_names[j]})"


# ---------------------------------------------------------------- 01 check
def step_check(demo, sec):
    d = demo.folder(sec)
    out = os.path.join(d, "check.json")
    demo.ffwd(sec, "check", demo.rel(demo.model), "--json", demo.rel(out))
    with open(out) as fh:
        s = json.load(fh)
    pay = s["payload"]
    sec.numbers += [
        ("model", f"{s['name']}, {s['dof']} joints, valid"),
        ("link mass", f"{s['total_link_mass']:.1f} kg"),
        ("payload", f"{pay['mass']:g} kg of {pay['rated_mass']:g} kg rated"),
        ("warnings", str(len(s["warnings"])) + (": " + "; ".join(s["warnings"])
                                                 if s["warnings"] else "")),
    ]
    sec.headline = f"valid, {len(s['warnings'])} warning(s)"


# ---------------------------------------------------------------- 02 feedforward
def step_feedforward(demo, sec):
    d = demo.folder(sec)
    rc, _ = demo.ffwd(sec, "torques", demo.rel(demo.model), demo.rel(demo.data["trajectory"]),
                      "--out", demo.rel(d), ok=(0, 1))
    robot = demo.robot
    cols = _read_csv(os.path.join(d, "torques.csv"))
    names = robot.joint_names
    tau = np.column_stack([cols[f"tau_{n}"] for n in names])
    grav = np.column_stack([cols[f"gravity_{n}"] for n in names])
    lim = np.array([j.limits.torque for j in robot.joints])
    ratio = np.abs(tau).max(0) / lim
    with open(os.path.join(d, "limits.json")) as fh:
        over = json.load(fh)
    rms = np.sqrt(np.mean(tau ** 2, axis=0))
    grav_share = np.sqrt(np.mean(grav ** 2, axis=0)) / np.maximum(rms, 1e-12)
    sec.numbers += [("peak torque / limit", ", ".join(
        f"{n} {r:.2f}" for n, r in zip(names, ratio)))]
    sec.numbers += [("peak torque", ", ".join(
        f"{n} {v:.0f} N m" for n, v in zip(names, np.abs(tau).max(0))))]
    sec.numbers += [("RMS gravity torque / RMS total torque", ", ".join(
        f"{n} {100 * v:.0f} %" for n, v in zip(names, grav_share)))]
    sec.numbers += [("limit exceedances", str(len(over)) + (
        " (" + "; ".join(f"{o['joint']} {o['limit']}" for o in over) + ")" if over else ""))]
    demo.figure(sec, "torques.png", "Feedforward torque per joint and its parts, limits dashed")
    sec.headline = (f"peak torque/limit {ratio.max():.2f} ({names[int(np.argmax(ratio))]}), "
                    f"{len(over)} exceedance(s)")


def _read_csv(path):
    with open(path, newline="") as fh:
        rows = list(csv.reader(fh))
    head = rows[0]
    arr = np.array([[float(v) for v in r] for r in rows[1:] if r])
    return {h: arr[:, k] for k, h in enumerate(head)}


# ---------------------------------------------------------------- 03 time-optimal
def step_time_optimal(demo, sec):
    d = demo.folder(sec)
    grid = 300 if demo.quick else 1000
    quick = ["--jerk", "off"] if demo.quick else []
    demo.ffwd(sec, "scale", demo.rel(demo.model), demo.rel(demo.data["trajectory"]),
              "--grid", grid, *quick, "--out", demo.rel(d))
    with open(os.path.join(d, "active.json")) as fh:
        rep = json.load(fh)
    nominal = demo.data["path"].duration
    dur = rep["duration_s"]
    robot = demo.robot
    share = rep["active_share"]
    sec.numbers += [
        ("duration of the optimal plan", f"{dur:.3f} s against {nominal:g} s nominal "
                                         f"({nominal / dur:.2f} x faster), grid "
                                         f"{rep['grid_segments']} segments"),
        ("active limits (share of segments)", ", ".join(
            f"{k} {100 * v:.0f} %" for k, v in share.items() if v >= 0.005)),
        ("stretches with one active limit", str(len(rep["active"])) + " (table in active.md)"),
    ]
    if rep.get("peak_torque_ratio"):
        sec.numbers.append(("peak torque / limit", ", ".join(
            f"{n} {r:.2f}" for n, r in zip(robot.joint_names, rep["peak_torque_ratio"]))))
    jerk = rep.get("jerk") or {}
    if jerk.get("method") not in (None, "none"):
        parts = [str(jerk["method"])]
        if "time_optimal_duration_s" in jerk:
            parts.append(f"without the jerk limits {jerk['time_optimal_duration_s']:.3f} s")
        if "duration_increase" in jerk:
            parts.append(f"the jerk limits add {100 * jerk['duration_increase']:.1f} %")
        if "worst_jerk_ratio" in jerk:
            parts.append(f"worst jerk / limit {jerk['worst_jerk_ratio']:.2f}"
                         + (f" ({jerk['worst_jerk_ratio_unflagged']:.2f} outside the "
                            f"{jerk.get('jerk_flagged_cycles', '?')} cycles where the jerk "
                            "bound gave way)" if "worst_jerk_ratio_unflagged" in jerk else ""))
        sec.numbers.append(("jerk pass", "; ".join(parts)))
    runs = [r for r in rep["active"] if r["segments"] > 1]
    if runs:
        sec.notes.append("| t from [s] | t to [s] | joint | limit | how |\n|---|---|---|---|---|\n"
                         + "\n".join(f"| {r['from_t']:.3f} | {r['to_t']:.3f} | {r['joint']} | "
                                     f"{r['limit']} ({r['side']}) | {r['how']} |" for r in runs))
    demo.figure(sec, "torques.png", "Joint torques of the time-optimal plan against the limits")
    demo.figure(sec, "phase.png", "Phase plane: path speed of the plan under the limit curves")
    demo.data["optimal_duration"] = dur
    top = next(iter(share.items()), None)
    sec.headline = f"{dur:.3f} s instead of {nominal:g} s" + (
        f"; mostly {top[0]} ({100 * top[1]:.0f} %)" if top else "")


# ---------------------------------------------------------------- 04 governor
def step_governor(demo, sec):
    d = demo.folder(sec)
    profile = os.path.join(SCENARIO, "override.csv")
    # samples every 10 ms of nominal time: a 64-sample window sees 0.64 s ahead, enough
    # to brake from full speed, so the governor can follow a 100 % command. The override
    # may change by at most 5 /s, its rate by 100 /s^2 (a smooth response for an operator;
    # with the command's defaults, 20 /s and 1000 /s^2, the applied override overshoots
    # after the drop and touches 0 on this move)
    rc, _ = demo.ffwd(sec, "govern", demo.rel(demo.model), demo.rel(demo.data["trajectory"]),
                      "--override", demo.rel(profile), "--ds", "0.01", "--horizon", 64,
                      "--rate-max", 5, "--rate-rate-max", 100, "--out", demo.rel(d),
                      ok=(0, 1))
    with open(os.path.join(d, "summary.json")) as fh:
        rep = json.load(fh)
    cols = _read_csv(os.path.join(d, "command.csv"))
    t, k, cmd = cols["t"], cols["override"], cols["override_cmd"]
    times, values = _profile(profile)
    low = float(values.min())
    t_drop = float(times[int(np.argmin(values))])
    t_back = float(times[int(np.argmin(values)) + 1]) if np.argmin(values) + 1 < len(times) \
        else None
    s_col = cols["s"]
    moving = (s_col > 0.02) & (s_col < demo.data["path"].duration - 0.02)
    sec.numbers += [
        ("end reached at rest", f"{rep['done']} after {rep['duration_s']:.3f} s "
                                f"(nominal {demo.data['path'].duration:g} s at 100 %)"),
        ("applied override", f"max {k.max():.3f}; min between leaving the tray and arriving "
                             f"at the fixture {k[moving].min():.3f}"),
    ]
    if t_back is not None:
        during = (t >= t_drop) & (t < t_back)
        first = _first(t, during & (k <= low + 0.01))
        off = during & (np.abs(k - low) > 0.01)
        settled = float(t[np.flatnonzero(off)[-1]]) if off.any() else t_drop
        if first is None:
            text = f"the applied override never came within 0.01 of {low:g}"
        else:
            after = during & (t >= first)
            text = (f"the applied override reaches {low:g} after {first - t_drop:.3f} s "
                    f"and then stays between {k[after].min():.3f} and "
                    f"{k[after].max():.3f}"
                    + ("" if settled <= first + 1e-9 else
                       f"; within 0.01 of {low:g} only from {settled - t_drop:.3f} s on"))
        sec.numbers.append((f"command {100 * low:.0f} % from t = {t_drop:g} to {t_back:g} s",
                            text))
        back = _first(t, (t >= t_back) & (k >= 0.995 * cmd.max()))
        sec.numbers.append((f"command back to 100 % at t = {t_back:g} s",
                            "applied override back at 100 % after "
                            + (f"{back - t_back:.3f} s" if back is not None else
                               "- (not before the end of the move)")))
    v = rep.get("violations") or {}
    if v:
        sec.numbers.append(("limit violations (recomputed by inverse dynamics)",
                            f"torque {v['torque']}, velocity {v['velocity']}, acceleration "
                            f"{v['acceleration']}; worst ratio torque "
                            f"{v['torque_worst']:.3f}, velocity {v['velocity_worst']:.3f}, "
                            f"acceleration {v['acceleration_worst']:.3f}"))
    fc = rep["flag_counts"]
    sec.numbers.append(("cycles", f"{rep['cycles']}; applied override held below the command "
                                  f"in {100 * rep['capped_share']:.1f} %; jerk bound gave way "
                                  f"{fc.get('jerk', 0)}, conflicts {fc.get('conflict', 0)}"))
    demo.figure(sec, "override.png", "Commanded and applied override over time")
    demo.figure(sec, "torques.png", "Joint torques of the governed motion against the limits")
    sec.headline = (f"{rep['duration_s']:.2f} s with the slow-down (override "
                    f"{k[moving].min():.2f} .. {k.max():.2f})"
                    + (f", {v['torque'] + v['velocity'] + v['acceleration']} limit "
                       "violations" if v else ""))
    if rc != 0:
        sec.notes.append("`ffwd govern` exited with 1: a limit was exceeded or the end not "
                         "reached (see summary.md).")


def _profile(path):
    rows = _read_csv(path)
    return rows["t"], rows["override"]


def _first(t, mask):
    idx = np.flatnonzero(mask)
    return float(t[idx[0]]) if len(idx) else None


# ---------------------------------------------------------------- 05 manipulability
def step_manipulability(demo, sec):
    d = demo.folder(sec)
    demo.ffwd(sec, "manip", demo.rel(demo.model), demo.rel(demo.data["trajectory_50hz"]),
              "--normalise", "--out", demo.rel(d))
    with open(os.path.join(d, "manip.json")) as fh:
        m = json.load(fh)

    def at(entry):
        return "-" if entry is None else f"{entry['value']:.1f} m/s^2 at t = {entry['t']:.2f} s"
    sec.numbers += [
        ("poses", f"{m['samples']} (the move at 50 Hz), torques scaled by their limits"),
        ("largest acceleration straight down", f"min {at(m['min_down'])}, max {at(m['max_down'])}"),
        ("largest acceleration straight up", f"min {at(m['min_up'])}, max {at(m['max_up'])}"),
        ("smallest largest semi-axis", at(m["min_largest_axis"])),
        ("poses the arm cannot hold", str(len(m["poses_not_held"]))),
    ]
    demo.figure(sec, "manip.png", "Reachable tool accelerations at rest along the move "
                                  "(ellipses at sample poses) and along gravity over time")
    up = m["min_up"]
    sec.headline = ("holds every pose" if not m["poses_not_held"] else
                    f"cannot hold {len(m['poses_not_held'])} poses") + (
        f", at least {up['value']:.1f} m/s^2 upward" if up else "")


# ---------------------------------------------------------------- 06 identification
def true_arm(robot):
    """The cell's real arm: the catalogue model with a heavier part and stiffer drives."""
    p = robot.payload
    real = robot.with_payload(TRUE_ARM["payload_mass"], p.com, p.inertia)
    theta = real.parameter_vector().copy()
    for key, offset in (("viscous", 11), ("coulomb", 12)):
        for name, value in TRUE_ARM[key].items():
            theta[13 * robot.joint_names.index(name) + offset] = value
    return real.with_parameters(theta)


def step_identification(demo, sec):
    from .identify import base_parameters
    from .identify.tomlout import dump_toml
    d = demo.folder(sec)
    robot = demo.robot
    real = true_arm(robot)
    real_file = os.path.join(d, "real_arm.toml")
    dump_toml(real, real_file, comment="the demo cell's 'real' arm: catalogue model with a "
                                       f"{TRUE_ARM['payload_mass']:g} kg payload and stiffer "
                                       "j2/j3 drives (payload folded into j6)")
    demo.data["real_arm"] = real_file
    excite = os.path.join(d, "excitation.csv")
    it, periods = (1, 1) if demo.quick else (6, 2)
    demo.ffwd(sec, "identify", "excite", demo.rel(demo.model), "--out", demo.rel(excite),
              "--harmonics", 3, "--samples", 40, "--max-iter", it, "--period", 8,
              "--periods", periods, "--rate", 200,
              "--plot", demo.rel(os.path.join(d, "excitation.png")))
    log = os.path.join(d, "log_excitation.csv")
    hold = os.path.join(d, "log_pick_place.csv")
    demo.ffwd(sec, "identify", "synth", demo.rel(real_file), demo.rel(excite), "--out",
              demo.rel(log), "--noise", TORQUE_NOISE, "--seed", 1)
    demo.ffwd(sec, "identify", "synth", demo.rel(real_file), demo.rel(demo.data["trajectory"]),
              "--out", demo.rel(hold), "--noise", TORQUE_NOISE, "--seed", 2)
    fit = os.path.join(d, "fit")
    demo.ffwd(sec, "identify", "fit", demo.rel(demo.model), demo.rel(log), "--holdout",
              demo.rel(hold), "--out", demo.rel(fit))
    demo.data["identified"] = os.path.join(fit, "six_axis_identified.toml")
    # compare with the truth, which only a synthetic log lets us know
    table = _read_csv_rows(os.path.join(fit, "base_parameters.csv"))
    base = base_parameters(robot)
    truth = base.project(real.parameter_vector())
    names = [r["name"] for r in table]
    est = np.array([float(r["estimate"]) for r in table])
    sd = np.array([float(r["sd"]) for r in table])
    prior = np.array([float(r["prior"]) for r in table])
    z = np.abs(est - truth) / sd
    sec.numbers += [
        ("base parameters", f"{len(names)}, condition number of the stacked regressor "
                            f"{_report_value(os.path.join(fit, 'report.md'), 'condition number of the stacked base regressor:')}"),
        ("estimate - truth", f"median {np.median(z):.2f} sd, largest {z.max():.2f} sd "
                             f"({names[int(np.argmax(z))]})"),
    ]
    for key, joint, value in ([("viscous", j, v) for j, v in TRUE_ARM["viscous"].items()]
                              + [("coulomb", j, v) for j, v in TRUE_ARM["coulomb"].items()]):
        k = names.index(f"{key}_{joint}")
        sec.numbers.append((f"{key} friction {joint}",
                            f"catalogue {prior[k]:g}, real {value:g}, identified "
                            f"{est[k]:.3f} +- {sd[k]:.3f}"))
    hold_rms = _holdout_rms(os.path.join(fit, "report.md"))
    if hold_rms:
        sec.numbers.append(("RMS torque error on the held-out pick-and-place log",
                            hold_rms + f" (torque noise sd {TORQUE_NOISE:g} N m)"))
    for name, cap in (("excitation.png", "The optimised excitation trajectory against limits"),):
        demo.figure(sec, name, cap)
    for name, cap in (("torque_prediction.png", "Held-out pick-and-place log: measured vs "
                                                "predicted torque"),
                      ("residuals.png", "Residuals on the held-out log"),
                      ("parameters.png", "Relative standard deviation of each base parameter")):
        demo.figure(sec, f"fit/{name}", cap)
    sec.headline = f"estimate within {z.max():.1f} sd of the truth"


def _read_csv_rows(path):
    with open(path, newline="") as fh:
        return list(csv.DictReader(fh))


def _report_value(report, prefix):
    """The text after `prefix` on the first line of report.md that has it."""
    with open(report) as fh:
        for line in fh:
            if prefix in line:
                return line.split(prefix, 1)[1].strip().rstrip(".")
    return "?"


def _holdout_rms(report):
    """'j1 x, j2 y, ...' from the held-out estimate column of report.md's RMS table."""
    with open(report) as fh:
        lines = fh.read().splitlines()
    for i, ln in enumerate(lines):
        if ln.startswith("| joint |") and "held-out, estimate" in ln:
            head = [c.strip() for c in ln.strip("|").split("|")]
            k = head.index("held-out, estimate")
            vals = []
            for row in lines[i + 2:]:
                if not row.startswith("|"):
                    break
                cells = [c.strip() for c in row.strip("|").split("|")]
                vals.append(f"{cells[0]} {cells[k]}")
            return ", ".join(vals) + " N m"
    return None


# ---------------------------------------------------------------- 07 latency
def step_latency(demo, sec):
    import tempfile
    d = demo.folder(sec)
    n = 2000 if demo.quick else 20000
    with tempfile.TemporaryDirectory(prefix="ffwd-demo-bench-") as build:
        rc, _ = demo.ffwd(sec, "latency", demo.rel(demo.model), "--iterations", n,
                          "--out", demo.rel(d), "--build", build, ok=(0, 1))
    sec.commands[-1] = sec.commands[-1].replace(build, "<temporary folder>")
    with open(os.path.join(d, "latency.json")) as fh:
        data = json.load(fh)
    res = data["results"]
    sec.numbers += [("how", f"{data.get('how', '?')}; {data['iterations']:,} timed calls per "
                            "function on this machine, under its current load")]
    sec.notes.append("| function | median ns | p99 ns | p99.9 ns | max ns |\n|---|---|---|---|---|\n"
                     + "\n".join(f"| {r['function']} | {r['median_ns']:.0f} | {r['p99_ns']:.0f} | "
                                 f"{r['p999_ns']:.0f} | {r['max_ns']:.0f} |" for r in res))
    if rc != 0:
        sec.notes.append("ffwd-bench reported a status other than OK for some function "
                         "(see log.txt).")
    demo.figure(sec, "latency.png", "Per-call latency histograms of the C core functions")
    idyn = next((r for r in res if r["function"] == "inverse_dynamics"), None)
    if idyn:
        sec.headline = (f"inverse dynamics median {idyn['median_ns']:.0f} ns, "
                        f"p99 {idyn['p99_ns']:.0f} ns")


# ---------------------------------------------------------------- 08 simulation
def step_simulation(demo, sec):
    d = demo.folder(sec)
    plant = demo.data.get("real_arm")
    extra = ["--plant-model", demo.rel(plant)] if plant else []
    runs = [("catalogue", demo.model)]
    ident = demo.data.get("identified")
    if ident and os.path.exists(ident) and not demo.quick:
        runs.append(("identified", ident))
    results = []
    for label, model in runs:
        sub = os.path.join(d, label)
        demo.ffwd(sec, "simulate", "track", demo.rel(model), "--trajectory",
                  demo.rel(demo.data["trajectory"]), "--out", demo.rel(sub), *extra)
        with open(os.path.join(sub, "track.json")) as fh:
            doc = json.load(fh)
        results.append((label, doc))
        demo.figure(sec, f"{label}/tracking.png",
                    f"Tracking error, controller model = {label}, plant = the real arm")
    for label, doc in results:
        pd, ff = doc["pd"], doc["pd_ff"]
        sec.numbers.append((f"RMS tracking error, {label} model",
                            f"PD {_fmt(_overall(pd))} rad, PD + feedforward "
                            f"{_fmt(_overall(ff))} rad (x{doc['ratio']:.1f} smaller)"))
    names = demo.robot.joint_names
    rows = ["| joint | " + " | ".join(f"PD, {lab} | PD + feedforward, {lab}"
                                      for lab, _ in results) + " |",
            "|---|" + "---|---|" * len(results)]
    for n in names:
        rows.append(f"| {n} | " + " | ".join(
            f"{doc['pd']['rms_error'][n]:.2e} | {doc['pd_ff']['rms_error'][n]:.2e}"
            for _, doc in results) + " |")
    sec.notes.append("RMS tracking error per joint [rad]; the PD gains follow from each "
                     "controller model's mass matrix, so PD alone differs a little too.")
    sec.notes.append("\n".join(rows))
    err = _feedforward_error(demo, [m for _, m in runs], plant)
    if err is not None:
        sec.notes.append("Feedforward torque error against the real arm along the move "
                         "(RMS of the model's inverse dynamics minus the real arm's) [N m]:")
        sec.notes.append("| joint | " + " | ".join(lab for lab, _ in runs) + " |\n|---|"
                         + "---|" * len(runs) + "\n" + "\n".join(
                             f"| {n} | " + " | ".join(_small(e[j]) for e in err) + " |"
                             for j, n in enumerate(names)))
    if len(results) == 2:
        worse = [j for j, n in enumerate(names) if results[1][1]["pd_ff"]["rms_error"][n]
                 > results[0][1]["pd_ff"]["rms_error"][n]]
        if worse and err is not None:
            sec.notes.append("The identified model tracks worse on " + ", ".join(
                f"{names[j]} (its feedforward is off by {_small(err[1][j])} N m RMS, the "
                f"catalogue's by {_small(err[0][j])} N m)" for j in worse)
                + ": where the catalogue was already right for this move, the identified "
                "model can only add its estimation error.")
    sec.headline = ", ".join(f"{lab} x{doc['ratio']:.1f}" for lab, doc in results)


def _feedforward_error(demo, models, plant):
    """(len(models), dof) RMS of each model's inverse dynamics minus the plant's along
    the move, or None without a plant model."""
    if not plant:
        return None
    import ffwd
    from .trajio import read_trajectory
    real = ffwd.load(plant)
    tr = read_trajectory(demo.data["trajectory"], real.joint_names)
    ref = ffwd.Dynamics(real).inverse_dynamics(tr.q, tr.qd, tr.qdd)
    out = []
    for m in models:
        tau = ffwd.Dynamics(ffwd.load(m)).inverse_dynamics(tr.q, tr.qd, tr.qdd)
        out.append(np.sqrt(np.mean((tau - ref) ** 2, axis=0)))
    return out


def _overall(summary):
    for key in ("rms_error_overall", "rms_overall", "rms"):
        v = summary.get(key)
        if isinstance(v, (int, float)):
            return float(v)
    raise KeyError("rms_error_overall")


STEPS = [
    ("00-scenario", "The scenario",
     "The move the cell repeats all day, built from five joint-space waypoints.",
     step_scenario),
    ("01-check", "Validate the model",
     "`ffwd check` loads the TOML model, validates it and describes it.", step_check),
    ("02-feedforward", "Feedforward along the move",
     "`ffwd torques`: inverse-dynamics feedforward (Newton-Euler, C core) along the sampled "
     "move, split into inertial, velocity-product, gravity and friction parts.",
     step_feedforward),
    ("03-time-optimal", "Time-optimal speed scaling",
     "`ffwd scale`: the fastest timing of the same path within the torque, velocity and "
     "acceleration limits, and which limit is active where.", step_time_optimal),
    ("04-governor", "Speed-override governor",
     "`ffwd govern`: the online governor runs the move while the operator drops the override "
     "to 30 % at t = 1.0 s and restores it at t = 2.5 s (examples/scenario/override.csv).",
     step_governor),
    ("05-manipulability", "Manipulability along the move",
     "`ffwd manip --normalise`: at each pose of the move, the tool accelerations the arm "
     "reaches from rest with joint torques whose limit-scaled vector has at most unit norm "
     "(a ball inside the torque limits): the dynamic manipulability ellipsoid, shifted by "
     "gravity, and how fast the arm can accelerate the part straight down and straight up.",
     step_manipulability),
    ("06-identification", "Identification from a synthetic log",
     "`ffwd identify`: an excitation trajectory, synthetic logs of the cell's real arm "
     "(6.5 kg payload instead of 5 kg, j2 viscous friction 13 instead of 10 N m s/rad, j3 "
     "Coulomb friction 15 instead of 12 N m, 1 N m torque noise), the fit of the excitation "
     "log and its validation on a held-out log of the pick-and-place move.",
     step_identification),
    ("07-latency", "Latency of the C core",
     "`ffwd latency`: per-call latency of the functions a controller calls each cycle.",
     step_latency),
    ("08-simulation", "Closed loop on the simulated arm",
     "`ffwd simulate track`: joint PD control alone and with inverse-dynamics feedforward on "
     "the simulated real arm, the controller using the catalogue model and, after "
     "identification, the identified one.", step_simulation),
]


# ---------------------------------------------------------------- the index page
def _listing(demo, sec):
    """Every file of the step's folder, relative to the output directory."""
    base = os.path.join(demo.out, sec.key)
    out = []
    for dirpath, _, files in os.walk(base):
        for f in sorted(files):
            out.append(os.path.relpath(os.path.join(dirpath, f), demo.out).replace(os.sep, "/"))
    return sorted(out)


def _status_text(sec):
    return {"ok": f"ran in {sec.seconds:.1f} s ({sec.cpu:.1f} s CPU)", "unavailable": "not available in this build",
            "failed": "FAILED", "skipped": "skipped"}[sec.status]


def write_index(demo):
    ok = sum(s.status == "ok" for s in demo.sections)
    head = (f"{ok} of {len(demo.sections)} steps ran; total {demo.total:.1f} s "
            f"({demo.total_cpu:.1f} s of CPU)"
            + (" (quick variant)" if demo.quick else "") + f"; {time.strftime('%Y-%m-%d %H:%M')}")
    md = ["# ffwd demo: a pick-and-place cell", "", STORY, "", head, ""]
    md += ["| step | status | headline |", "|---|---|---|"]
    for s in demo.sections:
        md.append(f"| [{s.key}](#{_slug(s.key + ': ' + s.title)}) {s.title} | "
                  f"{_status_text(s)} | {s.headline} |")
    h = ["<!DOCTYPE html>", "<html><head><meta charset='utf-8'>",
         "<title>ffwd demo: a pick-and-place cell</title>",
         "<style>body{font-family:sans-serif;max-width:1150px;margin:1em auto;padding:0 1em;"
         "line-height:1.4}img{max-width:100%;border:1px solid #ccc}table{border-collapse:"
         "collapse;margin:.5em 0}td,th{border:1px solid #ccc;padding:2px 8px;text-align:left;"
         "vertical-align:top}pre{background:#f4f4f4;padding:.5em;overflow-x:auto}"
         ".failed{color:#b00}.unavailable{color:#a60}figure{margin:1em 0}"
         "figcaption{font-size:90%;color:#444}</style></head><body>",
         "<h1>ffwd demo: a pick-and-place cell</h1>", f"<p>{html.escape(STORY)}</p>",
         f"<p><b>{html.escape(head)}</b></p>", "<table><tr><th>step</th><th>status</th>"
         "<th>headline</th></tr>"]
    for s in demo.sections:
        h.append(f"<tr><td><a href='#{s.key}'>{s.key}</a> {html.escape(s.title)}</td>"
                 f"<td class='{s.status}'>{_status_text(s)}</td><td>{html.escape(s.headline)}"
                 "</td></tr>")
    h.append("</table>")
    for s in demo.sections:
        md += ["", f"## {s.key}: {s.title}", "", s.intro, "", f"*{_status_text(s)}*"
               + (f": {s.reason}" if s.reason else ""), ""]
        h += [f"<h2 id='{s.key}'>{s.key}: {html.escape(s.title)}</h2>",
              f"<p>{_inline(s.intro)}</p>",
              f"<p class='{s.status}'><i>{_status_text(s)}</i>"
              + (f": {html.escape(s.reason)}" if s.reason else "") + "</p>"]
        if s.commands:
            md += ["```", *s.commands, "```", ""]
            h.append("<pre>" + html.escape("\n".join(s.commands)) + "</pre>")
        if s.numbers:
            md += ["| | |", "|---|---|"] + [f"| {a} | {b} |" for a, b in s.numbers] + [""]
            h.append("<table>" + "".join(f"<tr><th>{html.escape(a)}</th><td>{html.escape(b)}"
                                         "</td></tr>" for a, b in s.numbers) + "</table>")
        for n in s.notes:
            md += [n, ""]
            h.append(_md_table_html(n) if n.startswith("|") else f"<p>{html.escape(n)}</p>")
        for path, cap in s.figures:
            md += [f"![{cap}]({path})", "", f"*{cap}*", ""]
            h.append(f"<figure><a href='{path}'><img src='{path}' alt='{html.escape(cap)}'>"
                     f"</a><figcaption>{html.escape(cap)}</figcaption></figure>")
        files = _listing(demo, s) if s.status != "skipped" else []
        if files:
            md += ["Files: " + ", ".join(f"[{f.split('/', 1)[1]}]({f})" for f in files), ""]
            h.append("<p>Files: " + ", ".join(f"<a href='{f}'>{html.escape(f.split('/', 1)[1])}"
                                              "</a>" for f in files) + "</p>")
    h.append("</body></html>")
    with open(os.path.join(demo.out, "index.md"), "w", encoding="utf-8") as fh:
        fh.write("\n".join(md) + "\n")
    with open(os.path.join(demo.out, "index.html"), "w", encoding="utf-8") as fh:
        fh.write("\n".join(h) + "\n")


def _slug(heading):
    """The anchor markdown renderers give a heading: lower case, punctuation dropped,
    spaces as hyphens."""
    keep = "".join(c for c in heading.lower() if c.isalnum() or c in " -_")
    return keep.replace(" ", "-")


def _inline(text):
    """Escape, then turn `code` into <code>."""
    parts = html.escape(text).split("`")
    return "".join(f"<code>{p}</code>" if i % 2 else p for i, p in enumerate(parts))


def _md_table_html(text):
    rows = [r for r in text.splitlines() if r.startswith("|") and not r.startswith("|---")]
    out = ["<table>"]
    for i, r in enumerate(rows):
        cells = [c.strip() for c in r.strip().strip("|").split("|")]
        tag = "th" if i == 0 else "td"
        out.append("<tr>" + "".join(f"<{tag}>{html.escape(c)}</{tag}>" for c in cells) + "</tr>")
    return "".join(out) + "</table>"


def main(argv=None):
    p = argparse.ArgumentParser(prog="python -m ffwd.demo",
                                description="Run the ffwd demo scenario and write an index page.")
    p.add_argument("--out", default="demo-output", help="output folder (default: %(default)s)")
    p.add_argument("--quick", action="store_true", help="small grids and short runs")
    p.add_argument("--only", help="comma-separated step numbers to run, e.g. 02,04 "
                                  "(the scenario step always runs)")
    args = p.parse_args(argv)
    only = {s.strip().zfill(2) for s in args.only.split(",")} if args.only else None
    if not os.path.exists(MODEL) or not os.path.isdir(SCENARIO):
        print(f"ffwd demo: error: {MODEL} or {SCENARIO} not found; the demo runs from a "
              "source checkout", file=sys.stderr)
        return 2
    return Demo(args.out, quick=args.quick).run(STEPS, only)


if __name__ == "__main__":
    sys.exit(main())
