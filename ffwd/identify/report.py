"""The identification report: report.md plus PNG figures in one directory."""
import os


def _g(x, digits=5):
    return "-" if x is None else f"{x:.{digits}g}"


def _joint_rows(names, cols):
    out = ["| joint | " + " | ".join(c for c, _ in cols) + " |",
           "|---|" + "---|" * len(cols)]
    for j, n in enumerate(names):
        out.append(f"| {n} | " + " | ".join(_g(v[j], 4) for _, v in cols) + " |")
    return out


def write_report(ident, directory):
    """Write report.md and the figures; returns the path of report.md."""
    from ..plots.identify import plot_parameters, plot_prediction, plot_residuals
    os.makedirs(directory, exist_ok=True)
    robot, fit, s = ident.robot, ident.fit, ident.rows.samples
    names = robot.joint_names
    table = ident.table()
    figs = []
    val = ident.validation or ident.fit_validation
    which = "held-out log" if ident.validation is not None else "fit log (no held-out log given)"
    plot_prediction(robot, val, os.path.join(directory, "torque_prediction.png"),
                    f"{robot.name}: measured vs predicted torque, {which}")
    figs.append(("Measured vs predicted torque, " + which, "torque_prediction.png"))
    plot_residuals(robot, val, os.path.join(directory, "residuals.png"),
                   f"{robot.name}: residual (measured - predicted), {which}")
    figs.append(("Residual histograms, " + which, "residuals.png"))
    plot_parameters(table, os.path.join(directory, "parameters.png"),
                    f"{robot.name}: confidence of the {len(table)} base parameters")
    figs.append(("Relative standard deviation of the base parameters", "parameters.png"))

    L = [f"# Identification of {robot.name}", "",
         f"- log: `{s.path}`, {len(s.t)} rows at {s.work_rate:.4g} Hz working rate "
         f"(recorded {s.rate:.4g} Hz), {s.t[-1] - s.t[0]:.4g} s",
         f"- low-pass: Butterworth order {s.order}, zero phase (filtfilt), cutoff "
         f"{s.cutoff:.4g} Hz; fit rows every {s.decimation} working rows: "
         f"{len(s.keep)} samples x {robot.dof} joints",
         f"- dynamics backend: {ident.backend}",
         f"- base parameters: {ident.base.count} of {13 * robot.dof} standard parameters "
         f"(QR with column pivoting, rank tolerance {ident.base.rank_tol:g})",
         f"- condition number of the stacked base regressor: {fit.cond:.4g}",
         f"- estimator: {'weighted' if fit.method == 'wls' else 'ordinary'} least squares",
         ""]
    if ident.consistent is not None:
        c = ident.consistent
        L += [f"- physically consistent set: SDP on the pseudo-inertia matrices, solver "
              f"{c.solver} ({c.status}); its base parameters are {c.distance:.3g} "
              f"(Mahalanobis) from the estimate, at most {c.max_sigma:.3g} standard "
              "deviations in any one", ""]
    L += ["## Torque prediction error (RMS)", ""]
    fv = ident.fit_validation
    cols = [("fit log, estimate", fv.rms), ("fit log, consistent", fv.rms_consistent)]
    if ident.validation is not None:
        v = ident.validation
        cols += [("held-out, estimate", v.rms), ("held-out, consistent", v.rms_consistent)]
    cols += [("noise sd (filtered rows)", fit.sigma)]
    L += _joint_rows(names, cols)
    L += ["", "Measured (unfiltered) torque minus prediction from the filtered states, at "
          "the working rate. Units N m (N for prismatic joints).", ""]
    L += ["## Base parameters", "",
          "Estimate with standard deviation (sd) and relative sd; prior = the catalogue "
          "model's value; consistent = the base value of the physically consistent set.", "",
          "| # | name | prior | estimate | sd | rel sd % | consistent | combination |",
          "|---|---|---|---|---|---|---|---|"]
    for k, r in enumerate(table):
        L.append(f"| {k} | {r['name']} | {_g(r['prior'])} | {_g(r['estimate'])} | "
                 f"{_g(r['sd'], 3)} | {_g(r['rel_sd'], 3)} | {_g(r['consistent'])} | "
                 f"{r['expression']} |")
    un = ident.base.unidentifiable()
    L += ["", f"Not identifiable from joint torques ({len(un)}): "
          + (", ".join(un) if un else "none"), ""]
    L += ["## Figures", ""]
    for cap, f in figs:
        L += [f"![{cap}]({f})", ""]
    path = os.path.join(directory, "report.md")
    with open(path, "w") as fh:
        fh.write("\n".join(L))
    write_table_csv(table, os.path.join(directory, "base_parameters.csv"))
    return path


def write_table_csv(table, path):
    """The base-parameter table as CSV: name, prior, estimate, sd, rel_sd, consistent,
    combination."""
    import csv
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["name", "prior", "estimate", "sd", "rel_sd_percent", "consistent",
                    "combination"])
        for r in table:
            w.writerow([r["name"], repr(r["prior"]), repr(r["estimate"]), repr(r["sd"]),
                        repr(r["rel_sd"]), "" if r["consistent"] is None else
                        repr(r["consistent"]), r["expression"]])
