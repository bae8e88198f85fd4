"""Latency histograms of the C core functions measured by ffwd-bench."""
import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402


def plot_latency(results, title, path):
    """One panel per function: the histogram ffwd-bench reported (bins from the fastest
    call to p99.9; slower calls are counted in the last bar, marked '>'), with the
    median, p99 and p99.9 as vertical lines."""
    n = len(results)
    fig, axes = plt.subplots(n, 1, figsize=(8, 1.7 * n + 0.8), squeeze=False)
    for ax, r in zip(axes[:, 0], results):
        h = r["histogram"]
        counts = np.asarray(h["counts"], dtype=float)
        edges = np.linspace(h["lo_ns"], h["hi_ns"], len(counts) + 1)
        width = edges[1] - edges[0]
        ax.bar(edges[:-1], counts, width=width, align="edge", color="tab:blue", alpha=0.8)
        ax.bar([edges[-1]], [h["over"]], width=width, align="edge", color="tab:red", alpha=0.8)
        for key, style, label in (("median_ns", "-", "median"), ("p99_ns", "--", "p99"),
                                  ("p999_ns", ":", "p99.9")):
            ax.axvline(r[key], color="k", ls=style, lw=1, label=f"{label} {r[key]:.0f} ns")
        ax.set_yscale("log")
        ax.set_ylim(0.5, max(counts.max(), h["over"], 1) * 2)
        ax.set_ylabel("calls")
        ax.set_title(f"{r['function']} ({r['dof']} joints), max {r['max_ns']:.0f} ns "
                     f"(red: slower than p99.9, {h['over']} calls)", fontsize=9)
        ax.legend(fontsize=7, loc="upper right")
        ax.grid(alpha=0.3)
    axes[-1, 0].set_xlabel("time per call [ns]")
    fig.suptitle(title, fontsize=10)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)
    return path
