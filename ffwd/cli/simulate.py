"""`ffwd simulate`: the simulated arm in closed loop.

  ffwd simulate track MODEL   offline closed loop, PD alone and PD + feedforward:
                              track.json, tracking.png
  ffwd simulate loop MODEL    the fixed-rate C loop runner ffwd-loop: loop.json, latency.png
  ffwd simulate serve MODEL   the UDP plant server ffwd-plant-server in the foreground
"""
import json
import os
import signal
import subprocess
import sys
import tempfile

from ._common import load_model, progress_note


def _plant_options(p):
    g = p.add_argument_group("plant")
    g.add_argument("--plant-model", help="the plant's own model file (default: MODEL)")
    g.add_argument("--mismatch", type=float, default=0.0,
                   help="scale every inertial and friction parameter of the plant by "
                        "(1 + MISMATCH) (default 0)")
    g.add_argument("--integrator", choices=("rk4", "euler"), default="rk4",
                   help="rk4 or semi-implicit euler (default rk4)")
    g.add_argument("--substeps", type=int, default=1, help="integration sub-steps per cycle")
    g.add_argument("--delay", type=int, default=0, help="measurement delay in cycles")
    g.add_argument("--counts", type=float, default=0.0,
                   help="encoder counts per revolution (0 = exact)")
    g.add_argument("--noise-q", type=float, default=0.0, help="position noise std [rad]")
    g.add_argument("--noise-qd", type=float, default=0.0, help="velocity noise std [rad/s]")
    g.add_argument("--seed", type=int, default=1, help="noise seed (default 1)")
    g.add_argument("--no-saturation", action="store_true", help="do not clamp torques")


def register(sub):
    p = sub.add_parser("simulate", help="closed loop on a simulated arm (offline, fixed-rate "
                                        "loop, UDP plant server)",
                       description=__doc__, formatter_class=_Raw)
    modes = p.add_subparsers(dest="sim_mode", metavar="MODE")
    modes.required = True

    t = modes.add_parser("track", help="offline closed loop with and without feedforward",
                         description="Run a joint PD controller alone and with inverse-dynamics "
                                     "feedforward from MODEL on the simulated arm along the "
                                     "trajectory (default: the demo pick-and-place path). Writes "
                                     "track.json (RMS errors, ratio) and tracking.png. Exit 1 "
                                     "when --require-ratio is not met.")
    t.add_argument("model", help="controller's robot model (.toml, DH table or .urdf)")
    t.add_argument("--trajectory", help="trajectory CSV (t, q_<joint>[, qd_, qdd_]); "
                                        "default: the demo path")
    t.add_argument("--rate", type=float, default=1000.0, help="controller rate [Hz] (default 1000)")
    t.add_argument("--out", default="ffwd-simulate", help="output folder (default: %(default)s)")
    t.add_argument("--require-ratio", type=float, default=None,
                   help="exit 1 unless RMS(PD) / RMS(PD+FF) is at least this")
    t.add_argument("--backend", choices=("auto", "c", "twin"), default="auto",
                   help="plant and dynamics implementation (default auto)")
    _plant_options(t)
    t.set_defaults(func=run_track)

    lp = modes.add_parser("loop", help="run the fixed-rate C loop runner and plot its latency",
                          description="Run ffwd-loop (absolute-deadline sleeping at the rate, "
                                      "PD alone and PD + feedforward on the simulated arm) and "
                                      "write loop.json and latency.png.")
    lp.add_argument("model", help="controller's robot model")
    lp.add_argument("--trajectory", help="trajectory CSV; default: the demo path")
    lp.add_argument("--rate", type=float, default=1000.0, help="loop rate 250..8000 Hz")
    lp.add_argument("--cpu", type=int, help="pin the loop to this CPU")
    lp.add_argument("--rt-priority", type=int, help="ask for SCHED_FIFO with this priority")
    lp.add_argument("--mlock", action="store_true", help="lock memory (mlockall)")
    lp.add_argument("--free-run", action="store_true", help="do not sleep (no timing)")
    lp.add_argument("--out", default="ffwd-simulate", help="output folder (default: %(default)s)")
    _plant_options(lp)
    lp.set_defaults(func=run_loop_mode)

    s = modes.add_parser("serve", help="run the UDP plant server in the foreground",
                         description="Serve the simulated arm over UDP (frame layout in "
                                     "docs/sim.md). Ctrl-C stops it and prints its counters.")
    s.add_argument("model", help="the plant's robot model")
    s.add_argument("--bind", default="127.0.0.1", help="address (default 127.0.0.1)")
    s.add_argument("--port", type=int, default=47017, help="UDP port (default 47017; 0 = any)")
    s.add_argument("--rate", type=float, default=1000.0, help="plant step rate [Hz]")
    s.add_argument("--mode", choices=("lockstep", "realtime"), default="lockstep",
                   help="one step per command, or steps on the server's clock")
    s.add_argument("--watchdog-ms", type=float, default=100.0,
                   help="brake after this long without a valid command (default 100)")
    s.add_argument("--q0", help="initial joint positions, comma-separated")
    _plant_options(s)
    s.set_defaults(func=run_serve)


class _Raw(__import__("argparse").RawDescriptionHelpFormatter):
    pass


def _reference(robot, args):
    if not args.trajectory:
        return None
    from ..trajio import read_trajectory
    return read_trajectory(args.trajectory, robot.joint_names)


def _plant_robot(robot, args):
    if not args.plant_model:
        return None
    plant = load_model(args.plant_model)
    if plant.dof != robot.dof:
        raise ValueError(f"{args.plant_model}: {plant.dof} joints, the model has {robot.dof}")
    return plant


def _common(args):
    return dict(mismatch=args.mismatch, integrator=args.integrator, substeps=args.substeps,
                delay=args.delay, counts_per_rev=args.counts, noise_q=args.noise_q,
                noise_qd=args.noise_qd, seed=args.seed, saturate=not args.no_saturation)


def run_track(args):
    from ..plots.sim import plot_tracking
    from ..sim import track
    robot = load_model(args.model)
    path = _reference(robot, args)
    plant = _plant_robot(robot, args)
    opts = dict(_common(args), plant=plant, rate_hz=args.rate, backend=args.backend, progress=True)
    progress_note("closed loop, PD alone")
    pd = track(robot, path, feedforward=False, **opts)
    progress_note("closed loop, PD + feedforward")
    ff = track(robot, path, feedforward=True, **opts)
    ratio = pd.rms_error_overall / max(ff.rms_error_overall, 1e-300)
    os.makedirs(args.out, exist_ok=True)
    names = list(robot.joint_names)
    doc = {"model": args.model, "plant_model": args.plant_model, "ratio": ratio,
           "pd": pd.summary(names), "pd_ff": ff.summary(names)}
    with open(os.path.join(args.out, "track.json"), "w") as fh:
        json.dump(doc, fh, indent=2)
    plot_tracking(robot, pd, ff, os.path.join(args.out, "tracking.png"))
    print(f"RMS tracking error: PD {pd.rms_error_overall:.3e}, PD + feedforward "
          f"{ff.rms_error_overall:.3e} (ratio {ratio:.1f}); saturated steps "
          f"{pd.saturated_steps} / {ff.saturated_steps}")
    print(f"wrote {args.out}/track.json, {args.out}/tracking.png")
    if args.require_ratio is not None and ratio < args.require_ratio:
        print(f"ratio {ratio:.2f} is below the required {args.require_ratio:g}")
        return 1
    return 0


def run_loop_mode(args):
    from ..plots.sim import plot_latency
    from ..sim import run_loop
    robot = load_model(args.model)
    path = _reference(robot, args)
    progress_note(f"running ffwd-loop at {args.rate:g} Hz (PD, then PD + feedforward)")
    result = run_loop(robot, path, plant=_plant_robot(robot, args), rate_hz=args.rate,
                      cpu=args.cpu, rt_priority=args.rt_priority, mlock=args.mlock,
                      free_run=args.free_run, **_common(args))
    os.makedirs(args.out, exist_ok=True)
    with open(os.path.join(args.out, "loop.json"), "w") as fh:
        json.dump(result, fh, indent=2)
    plot_latency(result, os.path.join(args.out, "latency.png"))
    for note in result.get("notes", []):
        print(note, file=sys.stderr)
    for run in result["runs"]:
        w, c = run["wakeup_us"], run["compute_us"]
        print(f"{'PD + feedforward' if run['feedforward'] else 'PD':17s} RMS error "
              f"{run['rms_error_overall']:.3e}; deadline misses {run['deadline_misses']} of "
              f"{result['cycles']}; wake-up p99 {w['p99']:.1f} us, max {w['max']:.1f} us; "
              f"compute p99 {c['p99']:.1f} us")
    print(f"wrote {args.out}/loop.json, {args.out}/latency.png")
    return 0


def run_serve(args):
    from ..sim import find_program, mismatched, write_model_file
    robot = load_model(args.model)
    plant = mismatched(_plant_robot(robot, args) or robot, args.mismatch)
    exe = find_program("ffwd-plant-server")
    with tempfile.TemporaryDirectory(prefix="ffwd-serve-") as tmp:
        model_file = write_model_file(plant, os.path.join(tmp, "plant.txt"))
        cmd = [exe, "--model", model_file, "--bind", args.bind, "--port", str(args.port),
               "--rate", repr(args.rate), "--mode", args.mode, "--watchdog-ms",
               repr(args.watchdog_ms), "--integrator", args.integrator, "--substeps",
               str(args.substeps), "--delay", str(args.delay), "--counts", repr(args.counts),
               "--noise-q", repr(args.noise_q), "--noise-qd", repr(args.noise_qd),
               "--seed", str(args.seed)]
        if args.no_saturation:
            cmd.append("--no-saturation")
        if args.q0:
            cmd += ["--q0", args.q0]
        if args.bind != "127.0.0.1":
            print(f"note: serving on {args.bind}, not only on loopback", file=sys.stderr)
        proc = subprocess.Popen(cmd)
        # SIGTERM to this process stops the server too (it prints its counters)
        previous = signal.signal(signal.SIGTERM, lambda *_: proc.terminate())
        try:
            return proc.wait()
        except KeyboardInterrupt:
            proc.terminate()
            proc.wait()
            return 0
        finally:
            signal.signal(signal.SIGTERM, previous)
