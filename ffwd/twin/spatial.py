"""Spatial (6-D) vector algebra with 6x6 matrices, written for reading.

Notation and conventions follow Featherstone 2008, Rigid Body Dynamics Algorithms,
chapter 2 (from memory): a motion vector is [angular; linear] = [w; v], a force vector
is [moment; force] = [n; f], both expressed at the origin of some frame.

    X = xlt_rot(E, r)      Plücker transform of motion vectors from frame A to frame B,
                           where E rotates A coordinates into B coordinates and r is
                           B's origin in A coordinates:  X = [[E, 0], [-E r~, E]]
    X.T                    transforms force vectors from B back to A (X* = X^-T)
    crm(v) @ m             motion cross product   v x m
    crf(v) @ f             force cross product    v x* f  = -crm(v).T @ f
    inertia(m, h, I_O)     spatial inertia at a frame origin from the mass m, the first
                           moment h = m c and the 3x3 inertia I_O about that origin

The ffwd C core stores transforms as (R, p) instead of 6x6 matrices; the numbers agree.
"""
import numpy as np


def skew(a):
    """3x3 matrix a~ with a~ @ b == cross(a, b)."""
    return np.array([[0.0, -a[2], a[1]],
                     [a[2], 0.0, -a[0]],
                     [-a[1], a[0], 0.0]])


def xlt_rot(E, r):
    """Motion transform from frame A to frame B (E: A->B rotation of coordinates,
    r: B's origin in A coordinates)."""
    X = np.zeros((6, 6))
    X[:3, :3] = E
    X[3:, 3:] = E
    X[3:, :3] = -E @ skew(r)
    return X


def crm(v):
    """Motion cross-product operator: crm(v) @ m == v x m."""
    w, u = v[:3], v[3:]
    C = np.zeros((6, 6))
    C[:3, :3] = skew(w)
    C[3:, 3:] = skew(w)
    C[3:, :3] = skew(u)
    return C


def crf(v):
    """Force cross-product operator: crf(v) @ f == v x* f."""
    return -crm(v).T


def inertia(m, h, I_O):
    """Spatial inertia at a frame origin: [[I_O, h~], [h~^T, m 1]]."""
    S = np.zeros((6, 6))
    S[:3, :3] = I_O
    S[:3, 3:] = skew(h)
    S[3:, :3] = skew(h).T
    S[3:, 3:] = m * np.eye(3)
    return S


def inertia_from_params(p):
    """Spatial inertia from the 10 parameters m, mcx, mcy, mcz, Ixx, Ixy, Ixz, Iyy,
    Iyz, Izz (inertia about the frame origin, matrix entries)."""
    m, h = p[0], np.asarray(p[1:4], dtype=float)
    ixx, ixy, ixz, iyy, iyz, izz = p[4:10]
    I_O = np.array([[ixx, ixy, ixz],
                    [ixy, iyy, iyz],
                    [ixz, iyz, izz]], dtype=float)
    return inertia(m, h, I_O)


def axis_angle(axis, angle):
    """Rotation matrix of a rotation by `angle` about the unit vector `axis`
    (Rodrigues' formula)."""
    K = skew(axis)
    return np.eye(3) + np.sin(angle) * K + (1.0 - np.cos(angle)) * (K @ K)
