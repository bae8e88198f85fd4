"""Speed-scaling figures: torques of a plan against the limits, the phase plane
(s_dot against s) with its limit curves, the override commanded and applied."""
import matplotlib.pyplot as plt
import numpy as np

__all__ = ["plot_plan_torques", "plot_phase_plane", "plot_override", "plot_run_torques"]


def _torque_axes(robot, t, tau, title, path):
    n = robot.dof
    fig, axes = plt.subplots(n, 1, figsize=(9, 1.7 * n + 0.7), sharex=True, squeeze=False)
    for j, ax in enumerate(axes[:, 0]):
        joint = robot.joints[j]
        ax.plot(t, tau[:, j], color="k", lw=1.3)
        lim = joint.limits.torque
        if lim:
            for sign in (1, -1):
                ax.axhline(sign * lim, color="r", ls="--", lw=1)
            near = np.abs(tau[:, j]) >= 0.995 * lim
            if near.any():
                ax.plot(t[near], tau[near, j], ".", color="tab:orange", ms=3)
        unit = "N m" if joint.type == "revolute" else "N"
        ax.set_ylabel(f"{joint.name} [{unit}]")
        ax.grid(alpha=0.3)
    axes[0, 0].set_title(title)
    axes[-1, 0].set_xlabel("t [s]")
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)


def plot_plan_torques(robot, plan, path):
    """Torque of each joint along the plan; limits red dashed, points at a limit orange."""
    _torque_axes(robot, plan.t, plan.tau,
                 f"{robot.name}: time-optimal plan, {plan.duration:.3f} s "
                 "(torque limits red dashed, at limit orange)", path)


def plot_run_torques(robot, run, path):
    """Torque of each joint commanded by the governor, against the limits."""
    _torque_axes(robot, run.t, run.tau,
                 f"{robot.name}: governor command, {run.duration:.3f} s (torque limits red dashed)",
                 path)


def plot_phase_plane(plan, path):
    """s_dot against s: the plan, the largest admissible s_dot (limit curve) and the
    largest s_dot from which the end can still be reached (controllable curve)."""
    fig, ax = plt.subplots(figsize=(9, 4.2))
    lim = np.sqrt(np.minimum(plan.x_limit, 1e12))
    top = max(float(plan.sd.max()) * 1.6, 1e-3)
    ax.plot(plan.s, np.minimum(lim, top * 1.05), color="r", lw=1, label="limit curve (largest admissible)")
    ax.plot(plan.s, np.sqrt(plan.x_safe), color="tab:blue", ls="--", lw=1,
            label="controllable curve (can still stop at the end)")
    jerk = getattr(plan, "jerk", None) or {}
    label = "time-optimal profile"
    if "time_optimal_duration_s" in jerk:
        label = (f"jerk-bounded profile (time-optimal without the jerk limits: "
                 f"{jerk['time_optimal_duration_s']:.3f} s)")
    ax.plot(plan.s, plan.sd, color="k", lw=1.6, label=label)
    ax.set_ylim(0, top)
    ax.set_xlabel("s (nominal time) [s]")
    ax.set_ylabel("s_dot (override)")
    ax.set_title(f"phase plane: duration {plan.duration:.3f} s")
    ax.grid(alpha=0.3)
    ax.legend(loc="upper right", fontsize=8)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)


def plot_override(run, path):
    """Override commanded and applied against time, with the largest safe override."""
    fig, ax = plt.subplots(figsize=(9, 4.2))
    top = max(float(np.max(run.command)), float(np.max(run.override)), 1e-3) * 1.3
    ax.plot(run.t, np.minimum(run.safe_override, top), color="tab:blue", ls="--", lw=1,
            label="safe (window and limits)")
    ax.plot(run.t, run.command, color="tab:gray", lw=1.2, label="commanded")
    ax.plot(run.t, run.override, color="k", lw=1.6, label="applied")
    jerk = (run.flags & 8) != 0
    if jerk.any():
        ax.plot(run.t[jerk], run.override[jerk], "x", color="tab:orange", ms=4,
                label="rate-of-rate bound gave way")
    ax.set_ylim(0, top)
    ax.set_xlabel("t [s]")
    ax.set_ylabel("override")
    ax.set_title(f"speed override: path done in {run.duration:.3f} s" if run.done
                 else "speed override: path not finished")
    ax.grid(alpha=0.3)
    ax.legend(loc="upper right", fontsize=8)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)
