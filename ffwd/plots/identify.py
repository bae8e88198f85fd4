"""Figures of an identification: measured vs predicted torque per joint, residual
histograms, relative standard deviation of each base parameter, excitation trajectory."""
import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

__all__ = ["plot_prediction", "plot_residuals", "plot_parameters", "plot_excitation"]


def _grid(n, height):
    cols = 2 if n > 1 else 1
    rows = (n + cols - 1) // cols
    fig, axes = plt.subplots(rows, cols, figsize=(11, height * rows + 0.9), squeeze=False)
    for k in range(n, rows * cols):
        axes[k // cols, k % cols].set_visible(False)
    return fig, [axes[k // cols, k % cols] for k in range(n)]


def _unit(joint):
    return "N m" if joint.type == "revolute" else "N"


def plot_prediction(robot, val, path, title):
    """Measured torque against the predictions of the estimate and the consistent model."""
    fig, axes = _grid(robot.dof, 2.2)
    for j, ax in enumerate(axes):
        ax.plot(val.t, val.tau[:, j], color="0.6", lw=0.6, label="measured")
        ax.plot(val.t, val.predicted[:, j], color="tab:blue", lw=1.0,
                label=f"estimate (RMS err {val.rms[j]:.3g})")
        ax.plot(val.t, val.predicted_consistent[:, j], color="tab:orange", lw=1.0, ls="--",
                label=f"consistent (RMS err {val.rms_consistent[j]:.3g})")
        ax.set_ylabel(f"{robot.joints[j].name} [{_unit(robot.joints[j])}]")
        ax.grid(alpha=0.3)
        ax.legend(fontsize=7, loc="upper right")
    for ax in axes[-2:]:
        ax.set_xlabel("t [s]")
    fig.suptitle(title, fontsize=10)
    fig.tight_layout()
    fig.savefig(path, dpi=100)
    plt.close(fig)


def plot_residuals(robot, val, path, title):
    """Histogram of measured - predicted torque per joint with a normal curve of the same
    standard deviation."""
    fig, axes = _grid(robot.dof, 2.0)
    for j, ax in enumerate(axes):
        e = val.tau[:, j] - val.predicted[:, j]
        sd = float(np.std(e)) or 1.0
        ax.hist(e, bins=40, density=True, color="tab:blue", alpha=0.6)
        x = np.linspace(e.min(), e.max(), 200)
        ax.plot(x, np.exp(-0.5 * ((x - e.mean()) / sd) ** 2) / (sd * np.sqrt(2 * np.pi)),
                color="k", lw=1)
        ax.set_xlabel(f"{robot.joints[j].name} residual [{_unit(robot.joints[j])}], "
                      f"RMS {np.sqrt(np.mean(e ** 2)):.3g}", fontsize=8)
        ax.grid(alpha=0.3)
    fig.suptitle(title, fontsize=10)
    fig.tight_layout()
    fig.savefig(path, dpi=100)
    plt.close(fig)


def plot_parameters(table, path, title):
    """Relative standard deviation of each base parameter (log scale); hatched bars:
    estimates within 2 standard deviations of zero (their relative value says little)."""
    n = len(table)
    rel = np.array([min(r["rel_sd"], 1e4) for r in table])
    colors = ["tab:green" if v < 5 else "tab:orange" if v < 20 else "tab:red" for v in rel]
    fig, ax = plt.subplots(figsize=(9, 0.22 * n + 1.5))
    y = np.arange(n)
    bars = ax.barh(y, rel, color=colors)
    for bar, r in zip(bars, table):
        if abs(r["estimate"]) < 2 * r["sd"]:
            bar.set_hatch("//")
            bar.set_alpha(0.6)
    ax.set_yticks(y)
    ax.set_yticklabels([r["name"] for r in table], fontsize=7)
    ax.invert_yaxis()
    ax.set_xscale("log")
    ax.set_xlabel("relative standard deviation [%]  (green < 5 %, orange < 20 %, red above;\n"
                  "hatched: estimate within 2 sd of zero)")
    ax.axvline(5, color="0.5", lw=0.8, ls=":")
    ax.axvline(20, color="0.5", lw=0.8, ls=":")
    ax.grid(alpha=0.3, axis="x", which="both")
    ax.set_title(title, fontsize=10)
    fig.tight_layout()
    fig.savefig(path, dpi=100)
    plt.close(fig)


def plot_excitation(robot, t, q, qd, qdd, path, title):
    """Excitation trajectory as fractions of each joint's limits."""
    lo = np.array([j.limits.position[0] for j in robot.joints])
    hi = np.array([j.limits.position[1] for j in robot.joints])
    v = np.array([j.limits.velocity for j in robot.joints])
    a = np.array([j.limits.acceleration for j in robot.joints])
    mid, half = 0.5 * (lo + hi), 0.5 * (hi - lo)
    fig, axes = plt.subplots(3, 1, figsize=(10, 7), sharex=True)
    for ax, data, label in ((axes[0], (q - mid) / half, "position (-1 = min, 1 = max)"),
                            (axes[1], qd / v, "velocity / limit"),
                            (axes[2], qdd / a, "acceleration / limit")):
        for j in range(robot.dof):
            ax.plot(t, data[:, j], lw=1, label=robot.joints[j].name)
        for s in (1, -1):
            ax.axhline(s, color="r", ls="--", lw=0.8)
        ax.set_ylabel(label, fontsize=8)
        ax.set_ylim(-1.1, 1.1)
        ax.grid(alpha=0.3)
    axes[0].legend(fontsize=7, ncol=min(robot.dof, 8), loc="upper right")
    axes[-1].set_xlabel("t [s]")
    axes[0].set_title(title, fontsize=10)
    fig.tight_layout()
    fig.savefig(path, dpi=100)
    plt.close(fig)
