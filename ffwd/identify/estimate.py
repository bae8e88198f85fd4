"""Least-squares estimation of the base parameters.

Rows: the base regressor W_j (N x nb) and the torque y_j (N) of joint j at the N fit
samples, stacked over the joints.

Ordinary least squares (OLS): theta = argmin sum_j |W_j theta - y_j|^2.
Weighted least squares (WLS): the rows of joint j divided by its noise standard
deviation sigma_j, from the OLS residuals r_j: sigma_j^2 = |r_j|^2 / (N - nb_j), nb_j the
number of base parameters present in joint j's rows (Gautier and Poignet, 2001,
Extended Kalman filtering and weighted least squares dynamic identification of robot,
Control Engineering Practice 9(12), from memory).

Covariance. The torques were low-pass filtered before the rows were picked, so the
noise of neighbouring rows is correlated: white measurement noise of joint j gives row
noise with covariance sigma_j^2 C, C_tu = rho_|t-u| (rho from the filter, see
logs.Samples.noise_correlation). With weights w_j (1 for OLS, 1/sigma_j for WLS) and
B = sum_j w_j^2 W_j^T W_j the estimate's covariance is the sandwich
    cov = B^-1 (sum_j w_j^4 sigma_j^2 W_j^T C W_j) B^-1,
which for rho = [1] (no filtering) is the textbook sigma^2 (W^T W)^-1.
Standard deviation sd_k = sqrt(cov_kk); relative sd = 100 sd_k / |theta_k| %.
"""
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Fit:
    method: str               # "ols" or "wls"
    theta: np.ndarray         # (nb,) base parameters
    cov: np.ndarray           # (nb, nb)
    sigma: np.ndarray         # (dof,) row-noise standard deviation per joint (filtered torque)
    residual_rms: np.ndarray  # (dof,) RMS of y - W theta per joint on the fit rows
    cond: float               # condition number of the stacked base regressor
    rows: int

    @property
    def std(self):
        return np.sqrt(np.diag(self.cov))

    @property
    def rel_std(self):
        """Relative standard deviation in percent (inf where the estimate is 0)."""
        with np.errstate(divide="ignore"):
            return 100.0 * self.std / np.abs(self.theta)


def _lstsq(W, y):
    Q, R = np.linalg.qr(W)
    return np.linalg.solve(R, Q.T @ y)


def _correlated_gram(Wj, rho):
    """W_j^T C W_j with C_tu = rho[|t - u|] (zero beyond the last lag)."""
    G = Wj.T @ Wj
    for m in range(1, min(len(rho), len(Wj))):
        X = Wj[:-m].T @ Wj[m:]
        G = G + rho[m] * (X + X.T)
    return G


def _noise_sigma(Wb, r):
    N, dof, _ = Wb.shape
    nb_j = np.array([int(np.sum(np.any(Wb[:, j, :] != 0, axis=0))) for j in range(dof)])
    return np.sqrt(np.sum(r ** 2, axis=0) / np.maximum(N - nb_j, 1))


def least_squares(Wb, tau, weighted=True, rho=None):
    """Fit base parameters to torques: Wb (N, dof, nb), tau (N, dof) -> Fit.
    rho: noise correlation at lags 0, 1, ... fit rows (default white: [1])."""
    Wb = np.asarray(Wb, dtype=float)
    tau = np.asarray(tau, dtype=float)
    rho = np.array([1.0]) if rho is None else np.asarray(rho, dtype=float)
    N, dof, nb = Wb.shape
    if N * dof <= nb:
        raise ValueError(f"{N} samples x {dof} joints = {N * dof} equations for {nb} base "
                         "parameters; the log is too short")
    W = Wb.reshape(-1, nb)
    s = np.linalg.svd(W, compute_uv=False)
    cond = float(s[0] / s[-1]) if s[-1] > 0 else np.inf
    theta = _lstsq(W, tau.reshape(-1))
    r = tau - np.einsum("njk,k->nj", Wb, theta)
    sigma = _noise_sigma(Wb, r)
    method, w = "ols", np.ones(dof)
    if weighted:
        method = "wls"
        w = 1.0 / np.maximum(sigma, 1e-12 * max(float(np.max(np.abs(tau))), 1e-300))
        theta = _lstsq((Wb * w[None, :, None]).reshape(-1, nb), (tau * w).reshape(-1))
        r = tau - np.einsum("njk,k->nj", Wb, theta)
        sigma = _noise_sigma(Wb, r)
    B = sum(w[j] ** 2 * Wb[:, j, :].T @ Wb[:, j, :] for j in range(dof))
    meat = sum(w[j] ** 4 * sigma[j] ** 2 * _correlated_gram(Wb[:, j, :], rho)
               for j in range(dof))
    Binv = np.linalg.inv(B)
    cov = Binv @ meat @ Binv
    return Fit(method, theta, 0.5 * (cov + cov.T), sigma, np.sqrt(np.mean(r ** 2, axis=0)),
               cond, N * dof)
