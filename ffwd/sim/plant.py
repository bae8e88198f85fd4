"""The simulated arm: fixed-step forward dynamics plus a sensor (csrc/plant.c).

`Plant(robot, ...)` runs the C plant through the `ffwd._plant` extension when it is
built (backend "c") and otherwise this module's numpy copy of it (backend "twin"),
which follows csrc/plant.c line by line: same integrators, same saturation, same
xorshift64* noise generator, so both give the same numbers.

Per step: clamp torque to the torque limits (saturate=True); advance (q, qd) by dt in
`substeps` sub-steps of semi-implicit Euler (qd += h qdd; q += h qd) or classic RK4
with qdd from the forward dynamics of the plant's model (friction included); then the
sensor samples the state: position rounded to the encoder resolution (counts_per_rev
per revolution, or per metre for prismatic joints; 0 = exact) plus normal noise
(noise_q, noise_qd standard deviations), kept in a ring; `measure()` returns the
sample of `delay` steps ago. `brake(True)` stops the arm (qd = 0, q held).
"""
import numpy as np

__all__ = ["Plant", "MAX_DELAY", "MAX_SUBSTEPS", "INTEGRATORS"]

MAX_DELAY = 64
MAX_SUBSTEPS = 64
INTEGRATORS = ("euler", "rk4")
_MASK = (1 << 64) - 1


def _have_c():
    try:
        from .. import _plant  # noqa: F401
    except ImportError:
        return False
    return True


class _Rng:
    """xorshift64* with the same constants as csrc/plant.c."""

    def __init__(self, seed):
        self.s = int(seed) & _MASK or 0x9E3779B97F4A7C15

    def next(self):
        x = self.s
        x ^= x >> 12
        x ^= (x << 25) & _MASK
        x ^= x >> 27
        self.s = x
        return (x * 0x2545F4914F6CDD1D) & _MASK

    def normal(self):
        """Sum of 12 uniforms on [0, 1) minus 6."""
        return sum((self.next() >> 11) * (1.0 / 9007199254740992.0) for _ in range(12)) - 6.0


class _TwinPlant:
    """numpy copy of csrc/plant.c."""

    def __init__(self, robot, cfg, q0, qd0):
        from ..twin import forward_dynamics
        self.robot = robot
        self._fd = lambda q, qd, tau: forward_dynamics(robot, q, qd, tau)
        self.cfg = cfg
        n = robot.dof
        self.tau_max = np.array([j.limits.torque if j.limits.torque is not None else np.inf
                                 for j in robot.joints])
        self.quantum = np.array([(2 * np.pi if j.type == "revolute" else 1.0)
                                 / cfg["counts_per_rev"] if cfg["counts_per_rev"] > 0 else 0.0
                                 for j in robot.joints])
        self.q = np.array(q0, float)
        self.qd = np.zeros(n) if qd0 is None else np.array(qd0, float)
        self.tau = np.zeros(n)
        self.t = 0.0
        self.steps = self.saturated_steps = self.braked_steps = 0
        self.braked = False
        self.rng = _Rng(cfg["seed"])
        self.ring = []
        self._fill()

    def _sample(self):
        cfg = self.cfg
        q, qd = self.q.copy(), self.qd.copy()
        for i in range(len(q)):
            if self.quantum[i] > 0:
                c = q[i] / self.quantum[i]
                if abs(c) <= 2.0 ** 52:
                    q[i] = float(int(c + 0.5) if c >= 0 else -int(-c + 0.5)) * self.quantum[i]
            if cfg["noise_q"] > 0:
                q[i] += cfg["noise_q"] * self.rng.normal()
            if cfg["noise_qd"] > 0:
                qd[i] += cfg["noise_qd"] * self.rng.normal()
        self.ring.append((q, qd))
        if len(self.ring) > MAX_DELAY + 1:
            self.ring.pop(0)

    def _fill(self):
        self.ring = []
        for _ in range(MAX_DELAY + 1):
            self._sample()

    def _substep(self, q, qd, tau, h):
        fd = self._fd
        a1 = fd(q, qd, tau)
        if self.cfg["integrator"] == "euler":
            qd = qd + h * a1
            return q + h * qd, qd
        q2, v2 = q + h / 2 * qd, qd + h / 2 * a1
        a2 = fd(q2, v2, tau)
        q3, v3 = q + h / 2 * v2, qd + h / 2 * a2
        a3 = fd(q3, v3, tau)
        q4, v4 = q + h * v3, qd + h * a3
        a4 = fd(q4, v4, tau)
        return (q + h / 6 * (qd + 2 * v2 + 2 * v3 + v4),
                qd + h / 6 * (a1 + 2 * a2 + 2 * a3 + a4))

    def step(self, tau):
        u = np.array(tau, float)
        clamped = False
        if self.cfg["saturate"]:
            clamped = bool(np.any(np.abs(u) > self.tau_max))
            u = np.clip(u, -self.tau_max, self.tau_max)
        q, qd = self.q.copy(), self.qd.copy()
        if not self.braked:
            h = self.cfg["dt"] / self.cfg["substeps"]
            for _ in range(self.cfg["substeps"]):
                q, qd = self._substep(q, qd, u, h)
            if not (np.all(np.isfinite(q)) and np.all(np.isfinite(qd))):
                raise FloatingPointError("plant step: state became non-finite")
        self.q, self.qd, self.tau = q, qd, u
        self.t += self.cfg["dt"]
        self.steps += 1
        self.saturated_steps += int(clamped)
        self.braked_steps += int(self.braked)
        self._sample()

    def measure(self):
        q, qd = self.ring[-1 - self.cfg["delay"]]
        return q.copy(), qd.copy()

    def state(self):
        return self.q.copy(), self.qd.copy()

    def set_state(self, q, qd=None):
        self.q = np.array(q, float)
        self.qd = np.zeros_like(self.q) if qd is None else np.array(qd, float)
        self.braked = False
        self._fill()

    def brake(self, on):
        if on:
            self.qd = np.zeros_like(self.qd)
        self.braked = bool(on)


class Plant:
    """A simulated arm. robot: the plant's own model (may differ from the controller's).
    dt: step [s]. Other options as in the module doc. backend: "auto", "c" or "twin"."""

    def __init__(self, robot, dt=1e-3, *, integrator="rk4", substeps=1, delay=0, saturate=True,
                 counts_per_rev=0.0, noise_q=0.0, noise_qd=0.0, seed=1, q0=None, qd0=None,
                 backend="auto"):
        n = robot.dof
        dt = float(dt)
        if not (np.isfinite(dt) and 0 < dt <= 1):
            raise ValueError(f"dt: must be in (0, 1] s, got {dt}")
        if integrator not in INTEGRATORS:
            raise ValueError(f"integrator: must be one of {', '.join(INTEGRATORS)}, "
                             f"got {integrator!r}")
        if not 1 <= int(substeps) <= MAX_SUBSTEPS:
            raise ValueError(f"substeps: must be 1..{MAX_SUBSTEPS}, got {substeps}")
        if not 0 <= int(delay) <= MAX_DELAY:
            raise ValueError(f"delay: must be 0..{MAX_DELAY} steps, got {delay}")
        for name, v in (("counts_per_rev", counts_per_rev), ("noise_q", noise_q),
                        ("noise_qd", noise_qd)):
            if not (np.isfinite(float(v)) and float(v) >= 0):
                raise ValueError(f"{name}: must be a finite number >= 0, got {v}")
        q0 = np.zeros(n) if q0 is None else _vector(q0, n, "q0")
        qd0 = None if qd0 is None else _vector(qd0, n, "qd0")
        self.cfg = dict(dt=dt, integrator=integrator, substeps=int(substeps), delay=int(delay),
                        saturate=bool(saturate), counts_per_rev=float(counts_per_rev),
                        noise_q=float(noise_q), noise_qd=float(noise_qd),
                        seed=int(seed) & _MASK)
        self.robot = robot
        if backend == "auto":
            backend = "c" if _have_c() else "twin"
        if backend == "c":
            if not _have_c():
                raise ImportError("backend 'c': the compiled extension ffwd._plant is not "
                                  "available; build the package (make install) or use "
                                  "backend='twin'")
            from .. import _plant
            from ..pack import model_fields
            self._impl = _plant.Plant(model_fields(robot).as_dict(), self.cfg, q0,
                                      None if qd0 is None else qd0)
        elif backend == "twin":
            self._impl = _TwinPlant(robot, self.cfg, q0, qd0)
        else:
            raise ValueError(f"backend: must be 'auto', 'c' or 'twin', got {backend!r}")
        self.backend = backend

    def step(self, tau):
        """Apply tau for one step."""
        self._impl.step(_vector(tau, self.robot.dof, "tau"))

    def measure(self):
        """(q, qd) as the controller sees them now (delayed, quantised, noisy)."""
        q, qd = self._impl.measure()
        return np.asarray(q), np.asarray(qd)

    def state(self):
        """True (q, qd)."""
        q, qd = self._impl.state()
        return np.asarray(q), np.asarray(qd)

    def set_state(self, q, qd=None):
        n = self.robot.dof
        self._impl.set_state(_vector(q, n, "q"), None if qd is None else _vector(qd, n, "qd"))

    def brake(self, on=True):
        self._impl.brake(bool(on))

    @property
    def t(self):
        return float(self._impl.t)

    @property
    def tau(self):
        """Torque applied in the last step (after saturation)."""
        return np.asarray(self._impl.tau)

    def counters(self):
        i = self._impl
        return dict(steps=int(i.steps), saturated_steps=int(i.saturated_steps),
                    braked_steps=int(i.braked_steps), braked=bool(i.braked))


def _vector(x, n, name):
    a = np.asarray(x, dtype=float)
    if a.shape != (n,):
        raise ValueError(f"{name}: expected shape ({n},), got {a.shape}")
    if not np.all(np.isfinite(a)):
        raise ValueError(f"{name}: contains a non-finite value")
    return a
