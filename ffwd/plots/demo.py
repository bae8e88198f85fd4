"""Figures of the demo scenario: the tool path of the pick-and-place move, its height,
and the joint positions along it against their limits."""
import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

__all__ = ["plot_scenario"]


def _groups(xy, tol):
    """Indices of points grouped when they lie within tol of each other."""
    groups = []
    for k, p in enumerate(xy):
        for g in groups:
            if np.linalg.norm(xy[g[0]] - p) < tol:
                g.append(k)
                break
        else:
            groups.append([k])
    return groups


def plot_scenario(robot, t, q, tool_xyz, way_t, way_xyz, labels, path, title):
    """Top left: the tool's path seen from above (x-y), waypoints marked and named.
    Bottom left: the tool's height over the nominal time. Right: joint positions over
    the nominal time with the position limits as dashed lines."""
    fig = plt.figure(figsize=(12, 6.4))
    gs = fig.add_gridspec(2, 2, width_ratios=(1.0, 1.3), height_ratios=(1.5, 1.0))
    top = fig.add_subplot(gs[0, 0])
    height = fig.add_subplot(gs[1, 0])
    joints = fig.add_subplot(gs[:, 1])
    tt = np.linspace(t[0], t[-1], len(tool_xyz))

    top.plot(tool_xyz[:, 0], tool_xyz[:, 1], color="tab:blue", lw=1.5)
    top.plot([0], [0], marker="+", color="k", ms=12)
    top.annotate("base axis", (0, 0), textcoords="offset points", xytext=(6, -12), fontsize=8)
    for g in _groups(way_xyz[:, :2], 0.06):
        x, y = way_xyz[g[0], :2]
        top.plot(x, y, "o", color="tab:red", ms=5)
        text = "\n".join(f"{k} {labels[k]}" for k in g)
        top.annotate(text, (x, y), textcoords="offset points", xytext=(-8, 0), fontsize=8,
                     ha="right", va="center")
    xs = np.concatenate([tool_xyz[:, 0], [0.0]])
    ys = np.concatenate([tool_xyz[:, 1], [0.0]])
    top.set_xlim(xs.min() - 0.75, xs.max() + 0.15)
    top.set_ylim(ys.min() - 0.15, ys.max() + 0.15)
    top.set_aspect("equal", adjustable="box")
    top.set_xlabel("x [m]")
    top.set_ylabel("y [m]")
    top.set_title("tool path seen from above", fontsize=9)
    top.grid(alpha=0.3)

    height.plot(tt, tool_xyz[:, 2], color="tab:blue", lw=1.5)
    for k in range(len(way_t)):
        height.plot(way_t[k], way_xyz[k, 2], "o", color="tab:red", ms=5)
        height.annotate(f"{k}", (way_t[k], way_xyz[k, 2]), textcoords="offset points",
                        xytext=(4, 4), fontsize=8)
    height.set_xlabel("nominal time [s]")
    height.set_ylabel("tool height z [m]")
    height.set_title("tool height", fontsize=9)
    height.grid(alpha=0.3)

    colors = plt.rcParams["axes.prop_cycle"].by_key()["color"]
    for j, joint in enumerate(robot.joints):
        c = colors[j % len(colors)]
        joints.plot(t, q[:, j], color=c, lw=1.4, label=joint.name)
        lim = joint.limits.position
        if lim is not None and abs(lim[1]) < 4.0:
            joints.axhline(lim[1], color=c, ls="--", lw=0.7)
            joints.axhline(lim[0], color=c, ls="--", lw=0.7)
    for k, tk in enumerate(way_t):
        joints.axvline(tk, color="0.7", lw=0.7)
        joints.annotate(f"{k}", (tk, 1.0), xycoords=("data", "axes fraction"),
                        textcoords="offset points", xytext=(2, -10), fontsize=8)
    joints.set_xlabel("nominal time [s]")
    joints.set_ylabel("joint position [rad]")
    joints.set_title("joint positions; dashed: position limits (j6's +-6.28 rad off scale)",
                     fontsize=9)
    joints.grid(alpha=0.3)
    joints.legend(fontsize=8, loc="lower right", ncol=3)
    fig.suptitle(title, fontsize=11)
    fig.tight_layout()
    fig.savefig(path, dpi=100)
    plt.close(fig)
