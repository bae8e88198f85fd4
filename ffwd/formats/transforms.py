"""4x4 homogeneous transforms used by the model readers (plain numpy)."""
import numpy as np


def rot_x(a):
    c, s = np.cos(a), np.sin(a)
    return np.array([[1.0, 0, 0], [0, c, -s], [0, s, c]])


def rot_y(a):
    c, s = np.cos(a), np.sin(a)
    return np.array([[c, 0, s], [0, 1.0, 0], [-s, 0, c]])


def rot_z(a):
    c, s = np.cos(a), np.sin(a)
    return np.array([[c, -s, 0], [s, c, 0], [0, 0, 1.0]])


def rpy_matrix(roll, pitch, yaw):
    """Fixed-axis roll about x, then pitch about y, then yaw about z: Rz Ry Rx."""
    return rot_z(yaw) @ rot_y(pitch) @ rot_x(roll)


def make(R=None, p=None):
    T = np.eye(4)
    if R is not None:
        T[:3, :3] = R
    if p is not None:
        T[:3, 3] = p
    return T


def trans(x=0.0, y=0.0, z=0.0):
    return make(p=[x, y, z])


def rx(a):
    return make(rot_x(a))


def rz(a):
    return make(rot_z(a))


def move_link(T, mass, com, inertia):
    """A link's com and inertia (about com) given in frame B, expressed in frame A,
    where T is B in A: com_A = R com_B + p, I_A = R I_B R^T."""
    R, p = T[:3, :3], T[:3, 3]
    return mass, R @ np.asarray(com, float) + p, R @ np.asarray(inertia, float) @ R.T
