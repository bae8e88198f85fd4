"""Figures of the simulated closed loop: tracking error with and without feedforward,
and the loop runner's wake-up latency and compute-time histograms."""
import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

__all__ = ["plot_tracking", "plot_latency"]


def plot_tracking(robot, run_pd, run_ff, path, title=None):
    """|q_ref - q| per joint over time for PD alone and PD + feedforward (log scale)."""
    n = robot.dof
    cols = 2 if n > 1 else 1
    rows = (n + cols - 1) // cols
    fig, axes = plt.subplots(rows, cols, figsize=(10, 2.1 * rows + 0.9), sharex=True,
                             squeeze=False)
    floor = 1e-9
    for j in range(n):
        ax = axes[j // cols, j % cols]
        joint = robot.joints[j]
        unit = "rad" if joint.type == "revolute" else "m"
        for run, color, label in ((run_pd, "tab:red", "PD"), (run_ff, "tab:blue", "PD + feedforward")):
            err = np.maximum(np.abs(run.error[:, j]), floor)
            ax.semilogy(run.t, err, color=color, lw=0.9,
                        label=f"{label} (RMS {run.rms_error[j]:.2e})")
        ax.set_ylabel(f"{joint.name} |error| [{unit}]", fontsize=8)
        ax.grid(alpha=0.3, which="both")
        ax.legend(fontsize=7, loc="lower right")
    for k in range(n, rows * cols):
        axes[k // cols, k % cols].axis("off")
    for ax in axes[-1]:
        ax.set_xlabel("t [s]")
    ratio = run_pd.rms_error_overall / max(run_ff.rms_error_overall, 1e-300)
    mismatch = run_ff.options.get("mismatch", 0.0)
    fig.suptitle(title or (f"{robot.name}: tracking error at {run_ff.rate_hz:g} Hz, plant mismatch "
                           f"{mismatch:.0%}; RMS PD {run_pd.rms_error_overall:.2e}, "
                           f"PD+FF {run_ff.rms_error_overall:.2e} (x{ratio:.1f})"), fontsize=10)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)
    return path


def _hist_line(ax, stats, label, color):
    counts = np.asarray(stats["hist"], dtype=float)
    if counts.sum() == 0:
        return
    edges = np.arange(len(counts) + 1) * float(stats["hist_bin_us"])
    ax.stairs(np.maximum(counts, 0.5), edges, color=color, label=label, baseline=0.5)


def plot_latency(result, path):
    """Histograms of wake-up latency and compute time from ffwd-loop's JSON."""
    fig, axes = plt.subplots(1, 2, figsize=(11, 4), squeeze=False)
    period = float(result["period_us"])
    colors = {False: "tab:red", True: "tab:blue"}
    for ax, key, what in ((axes[0, 0], "wakeup_us", "wake-up latency"),
                          (axes[0, 1], "compute_us", "compute time (measure to command)")):
        for run in result["runs"]:
            s = run[key]
            name = "PD + feedforward" if run["feedforward"] else "PD"
            _hist_line(ax, s, f"{name}: p50 {s['p50']:.1f}, p99 {s['p99']:.1f}, max {s['max']:.1f} us"
                       + (f", {s['hist_overflow']} beyond" if s["hist_overflow"] else ""),
                       colors[bool(run["feedforward"])])
        if key == "wakeup_us":
            ax.axvline(period, color="k", ls="--", lw=1, label=f"period {period:.0f} us")
        ax.set_yscale("log")
        ax.set_xlabel("us")
        ax.set_ylabel("cycles")
        ax.set_title(what, fontsize=10)
        ax.grid(alpha=0.3, which="both")
        ax.legend(fontsize=7)
    misses = ", ".join(f"{'PD+FF' if r['feedforward'] else 'PD'} {r['deadline_misses']}"
                       for r in result["runs"])
    rt = result.get("realtime", {})
    granted = []
    if rt.get("cpu") is not None:
        granted.append(f"CPU {rt['cpu']} " + ("pinned" if rt.get("cpu_pinned") else "not pinned"))
    if rt.get("rt_priority") is not None:
        granted.append("SCHED_FIFO " + ("granted" if rt.get("rt_granted") else "refused"))
    extra = f"; {', '.join(granted)}" if granted else ""
    fig.suptitle(f"ffwd-loop at {result['rate_hz']:g} Hz, {result['cycles']} cycles per run; "
                 f"deadline misses: {misses}{extra}", fontsize=10)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)
    return path
