"""Torque of each joint along a trajectory against its limits."""
import matplotlib.pyplot as plt
import numpy as np


def plot_torques(robot, t, tau, parts, path):
    n = robot.dof
    fig, axes = plt.subplots(n, 1, figsize=(9, 1.9 * n + 0.6), sharex=True, squeeze=False)
    for j, ax in enumerate(axes[:, 0]):
        joint = robot.joints[j]
        ax.plot(t, tau[:, j], color="k", lw=1.5, label="total")
        for name, label, color in (("inertial", "inertial", "tab:blue"),
                                   ("velocity", "velocity product", "tab:orange"),
                                   ("gravity", "gravity", "tab:green"),
                                   ("friction", "friction", "tab:purple")):
            ax.plot(t, getattr(parts, name)[:, j], lw=0.9, color=color, label=label)
        lim = joint.limits.torque
        if lim:
            for sign in (1, -1):
                ax.axhline(sign * lim, color="tab:red", ls="--", lw=1)
            over = np.abs(tau[:, j]) > lim
            if over.any():
                ax.fill_between(t, -lim, lim, where=over, color="tab:red", alpha=0.15)
        unit = "N m" if joint.type == "revolute" else "N"
        ax.set_ylabel(f"{joint.name} [{unit}]")
        ax.grid(alpha=0.3)
    axes[0, 0].legend(loc="upper right", fontsize=7, ncol=5)
    axes[0, 0].set_title(f"{robot.name}: feedforward torque and limits (red dashed)")
    axes[-1, 0].set_xlabel("t [s]")
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)
