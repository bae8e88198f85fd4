"""Acceleration ellipses along a trajectory, drawn in the arm's plane at each pose."""
import matplotlib
matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from ..twin.kinematics import body_poses, tool_pose  # noqa: E402


def plot_plane(robot, q0):
    """(P, normal): P (2, 3) has orthonormal rows spanning the drawing plane. For an arm
    whose revolute axes are all parallel (a planar arm) the plane is normal to them, else
    the base x-z plane. Rows: horizontal in the plane, then 'up' (against gravity) when
    gravity lies in the plane."""
    poses = body_poses(robot, q0)
    axes = [T[:3, :3] @ j.axis for T, j in zip(poses, robot.joints) if j.type == "revolute"]
    normal = np.array([0.0, 1.0, 0.0])
    if axes and all(abs(abs(a @ axes[0]) - 1.0) < 1e-9 for a in axes):
        normal = axes[0] / np.linalg.norm(axes[0])
    g = np.asarray(robot.gravity, dtype=float)
    up = -(g - (g @ normal) * normal)
    if np.linalg.norm(up) < 1e-9:                      # gravity normal to the plane, or none
        up = np.cross(normal, [1.0, 0.0, 0.0])
        if np.linalg.norm(up) < 1e-9:
            up = np.cross(normal, [0.0, 1.0, 0.0])
    up /= np.linalg.norm(up)
    horizontal = np.cross(normal, up)
    return np.vstack([horizontal, up]), normal


def ellipse_points(centre2, shape2, k=120):
    """Boundary of {centre2 + L z : |z| <= 1} with L L^T = shape2 (2x2)."""
    vals, vecs = np.linalg.eigh(0.5 * (shape2 + shape2.T))
    L = vecs @ np.diag(np.sqrt(np.clip(vals, 0.0, None)))
    t = np.linspace(0.0, 2 * np.pi, k)
    return centre2[:, None] + L @ np.vstack([np.cos(t), np.sin(t)])


def plot_ellipses(robot, t, q, ellipsoids, path, max_poses=9):
    """PNG: left, the arm at up to max_poses poses with its acceleration ellipse drawn at
    the tool point (scaled, arrows from the tool point to the zero-torque acceleration);
    right, the accelerations straight down and up and the axis lengths along t."""
    P, _ = plot_plane(robot, q[0])
    idx = np.unique(np.linspace(0, len(t) - 1, min(max_poses, len(t))).round().astype(int))
    tools = np.array([P @ tool_pose(robot, qi)[:3, 3] for qi in q])
    reach = max(np.ptp(tools, axis=0).max(), 0.2)
    extent = max(max(np.abs(P @ e.centre).max() + e.lengths[0], 1e-12) for e in ellipsoids)
    scale = 0.15 * reach / extent                      # metres drawn per m/s^2
    unit = "torque / limit" if ellipsoids[0].normalised else "unit torque"

    fig, (ax, bx) = plt.subplots(1, 2, figsize=(13, 5.6), gridspec_kw={"width_ratios": [1.25, 1]})
    colours = plt.cm.viridis(np.linspace(0.0, 0.9, len(idx)))
    ax.plot(tools[:, 0], tools[:, 1], color="0.6", lw=1, ls=":", label="tool path")
    for c, i in zip(colours, idx):
        poses = body_poses(robot, q[i])
        for k, joint in enumerate(robot.joints):
            a = P @ (poses[joint.parent][:3, 3] if joint.parent >= 0 else np.zeros(3))
            b = P @ poses[k][:3, 3]
            ax.plot([a[0], b[0]], [a[1], b[1]], color=c, lw=2.2, alpha=0.8)
            ax.plot(b[0], b[1], "o", color=c, ms=3.5)
        a, b = P @ poses[robot.tool.parent][:3, 3], tools[i]
        ax.plot([a[0], b[0]], [a[1], b[1]], color=c, lw=1.4, alpha=0.8)
        e = ellipsoids[i]
        centre2 = b + scale * (P @ e.centre)
        pts = ellipse_points(centre2, scale**2 * (P @ e.shape @ P.T))
        ax.fill(pts[0], pts[1], color=c, alpha=0.18)
        ax.plot(pts[0], pts[1], color=c, lw=1.2)
        ax.annotate("", xy=centre2, xytext=b, arrowprops=dict(arrowstyle="->", color=c, lw=1))
        ax.plot(b[0], b[1], "k+", ms=7)
    ax.plot(0, 0, "ks", ms=7, label="base origin")
    ax.plot([], [], "k+", ms=7, label="tool point (zero acceleration)")
    ax.set_aspect("equal")
    ax.grid(alpha=0.3)
    ax.set_xlabel("horizontal in the arm's plane [m]")
    ax.set_ylabel("up [m]")
    ax.set_title(f"{robot.name}: reachable tool accelerations at rest ({unit})\n"
                 f"ellipse drawn at the tool (+), {scale:.3g} m per m/s$^2$; "
                 "arrow: zero-torque acceleration", fontsize=9)
    ax.legend(loc="lower left", fontsize=8)

    down = np.array([np.nan if e.down is None else e.down for e in ellipsoids])
    up = np.array([np.nan if e.up is None else e.up for e in ellipsoids])
    lengths = np.array([e.lengths for e in ellipsoids])
    bx.plot(t, down, lw=1.8, label="straight down (max)")
    bx.plot(t, up, lw=1.8, label="straight up (max)")
    bx.plot(t, lengths[:, 0], lw=1, ls="--", label="largest semi-axis")
    live = lengths[:, 1] > 0
    bx.plot(t[live], lengths[live, 1], lw=1, ls="--", label="second semi-axis")
    for i in idx:
        bx.axvline(t[i], color="0.85", lw=0.8, zorder=0)
    bx.axhline(0.0, color="k", lw=0.8)
    bx.set_xlabel("t [s]")
    bx.set_ylabel("acceleration [m/s$^2$]")
    bx.grid(alpha=0.3)
    bx.legend(fontsize=8, loc="best")
    bx.set_title("accelerations along gravity; grey lines: the poses drawn left", fontsize=9)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)
