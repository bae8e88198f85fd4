"""Cart-pole against its published equations of motion.

Source: Barto, Sutton and Anderson 1983, Neuronlike adaptive elements that can solve
difficult learning control problems, IEEE Trans. Systems, Man, and Cybernetics 13(5),
the frictionless equations (from memory). theta is the pole angle from upright (positive
leaning towards +x), x the cart position, F the force on the cart, l the half-length of
a uniform pole (inertia m_p l^2 / 3 about its centre):
    theta_dd = (g sin th + cos th (-F - m_p l th_d^2 sin th) / (m_c + m_p))
               / (l (4/3 - m_p cos^2 th / (m_c + m_p)))
    x_dd = (F + m_p l (th_d^2 sin th - theta_dd cos th)) / (m_c + m_p)
Built as a prismatic joint (cart, along x) carrying a revolute joint (pole, about y).
"""
import numpy as np
import pytest

from ffwd.model import Drive, Joint, Link, Robot, Tool
from ref_backend import dyn

G, M_CART, M_POLE, HALF = 9.8, 1.0, 0.1, 0.5   # the paper's values (from memory)


def cart_pole():
    cart = Joint("cart", "prismatic", -1, np.eye(3), np.zeros(3), np.array([1.0, 0, 0]),
                 Link(M_CART, np.zeros(3), np.diag([0.01, 0.01, 0.01])), Drive())
    inertia = M_POLE * HALF**2 / 3.0
    pole = Joint("pole", "revolute", 0, np.eye(3), np.zeros(3), np.array([0, 1.0, 0]),
                 Link(M_POLE, [0.0, 0.0, HALF], np.diag([inertia, inertia, 1e-6])), Drive())
    return Robot("cart_pole", np.array([0.0, 0.0, -G]), (cart, pole),
                 Tool(1, np.eye(3), [0.0, 0.0, 2 * HALF]))


def published(theta, theta_d, F):
    total = M_CART + M_POLE
    tmp = (-F - M_POLE * HALF * theta_d**2 * np.sin(theta)) / total
    theta_dd = (G * np.sin(theta) + np.cos(theta) * tmp) / (
        HALF * (4.0 / 3.0 - M_POLE * np.cos(theta)**2 / total))
    x_dd = (F + M_POLE * HALF * (theta_d**2 * np.sin(theta) - theta_dd * np.cos(theta))) / total
    return np.array([x_dd, theta_dd])


RNG = np.random.default_rng(1983)
CASES = [(RNG.uniform(-2, 2), RNG.uniform(-np.pi, np.pi), RNG.uniform(-3, 3), RNG.uniform(-3, 3),
          RNG.uniform(-10, 10)) for _ in range(8)]


@pytest.mark.parametrize("x, theta, x_d, theta_d, F", CASES)
def test_cart_pole_forward_dynamics(backend, x, theta, x_d, theta_d, F):
    d = dyn(cart_pole(), backend)
    q, qd = np.array([x, theta]), np.array([x_d, theta_d])
    expected = published(theta, theta_d, F)
    qdd = d.forward_dynamics(q, qd, np.array([F, 0.0]))
    assert np.max(np.abs(qdd - expected)) <= 1e-12 * (1 + np.abs(expected).max())
    # and back: the published motion needs force F on the cart and no pole torque
    tau = d.inverse_dynamics(q, qd, expected)
    assert np.max(np.abs(tau - [F, 0.0])) <= 1e-12 * (1 + abs(F))
