"""`ffwd identify`: excitation trajectory, synthetic log, and the fit of a log.

    ffwd identify excite MODEL --out traj.csv       optimised Fourier excitation trajectory
    ffwd identify synth MODEL TRAJ.csv --out log.csv --noise 0.5
                                                    play it through the model, add noise
    ffwd identify fit MODEL LOG.csv --out DIR [--holdout LOG2.csv]
                                                    base parameters, report, updated model
"""
import os

import numpy as np


def register(sub):
    p = sub.add_parser(
        "identify", help="identify inertial and friction parameters from logs",
        description="Parameter identification: design an excitation trajectory (excite), "
                    "make a synthetic log from a model (synth), fit a measured log and write "
                    "a report and the identified model (fit). See docs/identify.md.")
    modes = p.add_subparsers(dest="mode", metavar="MODE")
    modes.required = True

    e = modes.add_parser("excite", help="optimise an excitation trajectory (CSV)",
                         description="Optimise a finite Fourier series per joint for a well "
                                     "conditioned base regressor within the joint limits; "
                                     "write it as a trajectory CSV (t, q_*, qd_*, qdd_*).")
    e.add_argument("model")
    e.add_argument("--out", required=True, help="trajectory CSV to write")
    e.add_argument("--period", type=float, default=10.0, help="period in s [10]")
    e.add_argument("--harmonics", type=int, default=5, help="harmonics per joint [5]")
    e.add_argument("--samples", type=int, default=100,
                   help="time points the regressor is stacked at [100]")
    e.add_argument("--max-iter", type=int, default=100, help="optimiser iterations [100]")
    e.add_argument("--margin", type=float, default=0.05,
                   help="fraction of each limit kept free [0.05]")
    e.add_argument("--rate", type=float, default=500.0, help="CSV sample rate in Hz [500]")
    e.add_argument("--periods", type=int, default=1, help="periods written [1]")
    e.add_argument("--seed", type=int, default=0, help="random starting point [0]")
    e.add_argument("--plot", metavar="PNG", help="also plot the trajectory against the limits")
    e.add_argument("--backend", default=None, help="dynamics backend (c, twin) [c if built]")
    e.set_defaults(func=run_excite)

    s = modes.add_parser("synth", help="synthetic log: a trajectory played through the model",
                         description="Inverse dynamics of the model along a trajectory CSV, "
                                     "plus Gaussian noise; writes a log CSV (t, q_*, tau_*).")
    s.add_argument("model")
    s.add_argument("trajectory", help="trajectory CSV (t, q_*, optional qd_*, qdd_*)")
    s.add_argument("--out", required=True, help="log CSV to write")
    s.add_argument("--noise", default="0", help="torque noise sd, one value or one per joint "
                                                "(comma separated) [0]")
    s.add_argument("--q-noise", default="0", help="position noise sd, as --noise [0]")
    s.add_argument("--seed", type=int, default=0)
    s.add_argument("--with-qd", action="store_true", help="also write qd_* columns")
    s.add_argument("--backend", default=None)
    s.set_defaults(func=run_synth)

    f = modes.add_parser("fit", help="fit a log: base parameters, report, identified model",
                         description="Read and filter a log, estimate the base parameters, "
                                     "find the nearest physically consistent model, validate "
                                     "on a held-out log; write report.md, PNG figures, "
                                     "base_parameters.csv and the identified model TOML.")
    f.add_argument("model")
    f.add_argument("log", help="log CSV: t, q_<joint>, [qd_<joint>], tau_<joint> or i_<joint>")
    f.add_argument("--out", required=True, help="output directory")
    f.add_argument("--holdout", help="second log for validation")
    f.add_argument("--cutoff", type=float, help="low-pass cutoff in Hz [from the data]")
    f.add_argument("--order", type=int, default=4, help="Butterworth order [4]")
    f.add_argument("--decimation", type=int, help="fit-row spacing in working rows [auto]")
    f.add_argument("--ols", action="store_true", help="ordinary instead of weighted LS")
    f.add_argument("--no-consistent", action="store_true",
                   help="skip the physically consistent model (no TOML written)")
    f.add_argument("--kt", help="motor torque constant(s) in N m/A for i_<joint> columns: "
                                "one number, or joint=value pairs separated by commas")
    f.add_argument("--max-gap", type=float, help="longest accepted time step in s "
                                                 "[2.5x the median step]")
    f.add_argument("--max-cond", type=float, default=1e4,
                   help="largest accepted condition number of the base regressor [1e4]")
    f.add_argument("--backend", default=None)
    f.set_defaults(func=run_fit)


def _per_joint(text, robot, what):
    try:
        vals = [float(x) for x in str(text).split(",")]
    except ValueError:
        raise ValueError(f"{what}: expected numbers separated by commas, got {text!r}") from None
    if len(vals) not in (1, robot.dof):
        raise ValueError(f"{what}: give 1 or {robot.dof} values, got {len(vals)}")
    return np.array(vals if len(vals) > 1 else vals * robot.dof)


def _kt(text, robot):
    if text is None:
        return None
    if "=" not in text:
        try:
            return float(text)
        except ValueError:
            raise ValueError(f"--kt: not a number: {text!r} (give N m/A, or joint=value,...)") from None
    out = {}
    for part in text.split(","):
        name, _, val = part.partition("=")
        name = name.strip()
        if name not in robot.joint_names:
            raise ValueError(f"--kt: no joint {name!r} in the model")
        try:
            out[name] = float(val)
        except ValueError:
            raise ValueError(f"--kt: joint {name!r}: not a number: {val!r}") from None
    return out


def run_excite(args):
    from ..identify import design_excitation, write_excitation
    from ._common import load_model
    robot = load_model(args.model)
    from ..identify.backend import dynamics_for
    if args.backend is None and dynamics_for(robot).name != "c":
        from ._common import progress_note
        progress_note("the compiled core is not available: the numpy twin computes the "
                      "regressor, which makes the optimisation slow (lower --max-iter or "
                      "--samples, or build the package)")
    res = design_excitation(robot, period=args.period, harmonics=args.harmonics,
                            samples=args.samples, max_iter=args.max_iter, margin=args.margin,
                            seed=args.seed, backend=args.backend, progress=True)
    t, q, qd, qdd = write_excitation(args.out, robot, res.trajectory, rate=args.rate,
                                     periods=args.periods)
    print(f"{robot.name}: {res.base_count} base parameters; condition number of the stacked "
          f"base regressor {res.cond_start:.4g} at the random start -> {res.cond:.4g} after "
          f"{res.iterations} iterations ({res.message})")
    for k, n in enumerate(robot.joint_names):
        print(f"  {n}: uses {100 * res.limit_use['position'][k]:.0f} % of the position range, "
              f"{100 * res.limit_use['velocity'][k]:.0f} % of the velocity limit, "
              f"{100 * res.limit_use['acceleration'][k]:.0f} % of the acceleration limit")
    print(f"wrote {args.out}: {len(t)} rows, {t[-1]:.4g} s at {args.rate:g} Hz, "
          "starting and ending at rest")
    if args.plot:
        from ..plots.identify import plot_excitation
        plot_excitation(robot, t, q, qd, qdd, args.plot,
                        f"{robot.name}: excitation trajectory (cond {res.cond:.4g})")
        print(f"wrote {args.plot}")
    return 0


def run_synth(args):
    from ..identify import write_synthetic_log
    from ..trajio import read_trajectory
    from ._common import load_model
    robot = load_model(args.model)
    tr = read_trajectory(args.trajectory, robot.joint_names)
    qd = tr.qd if tr.qd is not None else np.gradient(tr.q, tr.t, axis=0)
    qdd = tr.qdd if tr.qdd is not None else np.gradient(qd, tr.t, axis=0)
    noise = _per_joint(args.noise, robot, "--noise")
    qn = _per_joint(args.q_noise, robot, "--q-noise")
    write_synthetic_log(args.out, robot, tr.t, tr.q, qd, qdd, tau_noise=noise, q_noise=qn,
                        seed=args.seed, backend=args.backend, with_qd=args.with_qd)
    print(f"wrote {args.out}: {len(tr.t)} rows; torque noise sd {noise.tolist()}, "
          f"position noise sd {qn.tolist()}")
    return 0


def run_fit(args):
    from ..identify import from_log
    from ._common import load_model
    robot = load_model(args.model)
    ident = from_log(robot, args.log, holdout=args.holdout, cutoff=args.cutoff,
                     order=args.order, decimation=args.decimation, weighted=not args.ols,
                     consistent=not args.no_consistent, torque_constants=_kt(args.kt, robot),
                     max_gap=args.max_gap, max_cond=args.max_cond, backend=args.backend,
                     progress=True)
    os.makedirs(args.out, exist_ok=True)
    report = ident.write_report(args.out)
    fit, s = ident.fit, ident.rows.samples
    print(f"{robot.name}: {ident.base.count} base parameters from {len(s.keep)} samples "
          f"(cutoff {s.cutoff:.3g} Hz), condition number {fit.cond:.4g}, "
          f"{'weighted' if fit.method == 'wls' else 'ordinary'} least squares")
    worst = max(ident.table(), key=lambda r: r["rel_sd"])
    print(f"  largest relative standard deviation: {worst['name']} {worst['rel_sd']:.3g} %")
    val = ident.validation or ident.fit_validation
    where = "held-out" if ident.validation is not None else "fit"
    for k, n in enumerate(robot.joint_names):
        print(f"  {n}: RMS torque error on the {where} log {val.rms[k]:.4g} (estimate), "
              f"{val.rms_consistent[k]:.4g} (consistent)")
    if ident.model is not None:
        name = os.path.splitext(os.path.basename(args.model))[0] + "_identified.toml"
        path = os.path.join(args.out, name)
        ident.write_model(path)
        c = ident.consistent
        print(f"  physically consistent model ({c.solver}): base parameters within "
              f"{c.max_sigma:.3g} sd of the estimate; wrote {path}")
    print(f"wrote {report}")
    return 0
