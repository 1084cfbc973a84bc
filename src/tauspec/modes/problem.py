"""The nonlinear least-squares problem of discrete Maxwell modes: parameters, residuals, Jacobian, bounds.

For given relaxation times τ_i the mode strengths g_i ≥ 0, η_s ≥ 0 and G_e ≥ 0 enter the relative residuals
linearly: r = B(τ) c − y with the columns [K'(ωτ_i)/G'; K''(ωτ_i)/G''] of the Maxwell kernels, [0; ω/G'']
and [1/G'; 0].  :class:`_Projected` solves them by nonnegative least squares inside every evaluation, so the
outer problem has only the log-times (variable projection, Golub & Pereyra 1973, 2003), and differentiates
the projected residual with the closed-form kernel derivatives (:func:`~tauspec.spectrum.kernels.kernel_slopes`).

References
----------
Golub, G. H. & Pereyra, V. (1973). SIAM J. Numer. Anal. 10, 413–432.
Golub, G. H. & Pereyra, V. (2003). Inverse Problems 19, R1–R26.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable

import numpy as np

from ..spectrum.kernels import kernel_slopes, kernel_values, loss_kernel, modes_moduli, storage_kernel
from ..spectrum.lsq import nnls_small, projected_jacobian

__all__ = []


#: A fitted mode whose largest contribution to G' or G'' is below this share of
#: the data is dropped and the fit repeated.
_NEGLIGIBLE = 1e-4

#: Relaxation times are kept within this factor beyond the measured 1/ω range ...
_TAU_MARGIN = 100.0
#: ... or within this factor on the side where a solvent viscosity (or an equilibrium modulus) is fitted, since
#: a mode beyond it cannot be told apart from η_s (or G_e).
_NEAR = 10.0


# --------------------------------------------------------------------------- the fit


@dataclasses.dataclass(frozen=True)
class _Problem:
    omega: np.ndarray
    storage: np.ndarray
    loss: np.ndarray
    solvent: bool
    equilibrium_modulus: bool
    eta_ref: float
    G_ref: float
    ln_tau_bounds: tuple[float, float]
    ln_g_bounds: tuple[float, float]
    eta_known: float = 0.0

    @property
    def n_data(self) -> int:
        return 2 * self.omega.size

    def n_extra(self) -> int:
        return int(self.solvent) + int(self.equilibrium_modulus)

    def unpack(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray, float, float]:
        m = (x.size - self.n_extra()) // 2
        g = np.exp(x[:m])
        tau = np.exp(x[m:2 * m])
        k = 2 * m
        eta_s = G_e = 0.0
        if self.solvent:
            eta_s = x[k] * self.eta_ref
            k += 1
        if self.equilibrium_modulus:
            G_e = x[k] * self.G_ref
        return g, tau, eta_s, G_e

    def residuals(self, x: np.ndarray) -> np.ndarray:
        g, tau, eta_s, G_e = self.unpack(x)
        gp, gpp = modes_moduli(self.omega, g, tau, eta_s=eta_s + self.eta_known, G_e=G_e)
        return np.concatenate([gp / self.storage - 1.0, gpp / self.loss - 1.0])

    def target(self) -> np.ndarray:
        """Right-hand side of the linear starts: 1, less the known solvent's share of G''."""
        b = np.ones(self.n_data)
        b[self.omega.size:] -= self.eta_known * self.omega / self.loss
        return b

    def jacobian(self, x: np.ndarray) -> np.ndarray:
        g, tau, _, _ = self.unpack(x)
        m = g.size
        xt = np.outer(self.omega, tau)
        kp = storage_kernel(xt)
        kpp = loss_kernel(xt)
        J = np.zeros((self.n_data, x.size))
        n = self.omega.size
        sp = 1.0 / self.storage[:, None]
        sl = 1.0 / self.loss[:, None]
        J[:n, :m] = kp * g * sp
        J[n:, :m] = kpp * g * sl
        # d/d ln τ of x²/(1+x²) is 2K'(1−K'); of x/(1+x²) is K''(1−2K').
        J[:n, m:2 * m] = 2.0 * kp * (1.0 - kp) * g * sp
        J[n:, m:2 * m] = kpp * (1.0 - 2.0 * kp) * g * sl
        k = 2 * m
        if self.solvent:
            J[n:, k] = self.eta_ref * self.omega / self.loss
            k += 1
        if self.equilibrium_modulus:
            J[:n, k] = self.G_ref / self.storage
        return J

    def pack(self, g: np.ndarray, tau: np.ndarray, eta_s: float, G_e: float) -> np.ndarray:
        lo, hi = self.ln_tau_bounds
        glo, ghi = self.ln_g_bounds
        parts = [np.clip(np.log(np.maximum(g, 1e-300)), glo + 1e-9, ghi - 1e-9),
                 np.clip(np.log(tau), lo + 1e-9, hi - 1e-9)]
        if self.solvent:
            parts.append([max(eta_s, 0.0) / self.eta_ref])
        if self.equilibrium_modulus:
            parts.append([max(G_e, 0.0) / self.G_ref])
        return np.concatenate([np.asarray(p, dtype=float) for p in parts])

    def extra_columns(self) -> np.ndarray:
        """The columns of η_s/η_ref and G_e/G_ref in the relative residuals."""
        n = self.omega.size
        cols = []
        if self.solvent:
            cols.append(np.concatenate([np.zeros(n), self.eta_ref * self.omega / self.loss]))
        if self.equilibrium_modulus:
            cols.append(np.concatenate([self.G_ref / self.storage, np.zeros(n)]))
        return np.column_stack(cols) if cols else np.zeros((2 * n, 0))

    def bounds(self, m: int) -> tuple[np.ndarray, np.ndarray]:
        lo, hi = self.ln_tau_bounds
        glo, ghi = self.ln_g_bounds
        lower = np.concatenate([np.full(m, glo), np.full(m, lo), np.zeros(self.n_extra())])
        upper = np.concatenate([np.full(m, ghi), np.full(m, hi), np.full(self.n_extra(), np.inf)])
        return lower, upper


@dataclasses.dataclass(frozen=True)
class _Fit:
    g: np.ndarray
    tau: np.ndarray
    eta_s: float
    G_e: float
    rss: float
    x: np.ndarray

    @property
    def n_modes(self) -> int:
        return int(self.g.size)


class _Projected:
    """r(ln τ) with (g, η_s, G_e) ≥ 0 projected out, and its Jacobian (eq. (1) of :mod:`tauspec.spectrum.lsq`).

    Calling it returns r and the function giving ∂r/∂ln τ (a lazy Jacobian) for
    :func:`~tauspec.spectrum.lsq.levenberg_marquardt`; ``c`` holds the linear coefficients of the last
    evaluation (g, η_s/η_ref, G_e/G_ref), whose positive set starts the next nonnegative solve.
    """

    def __init__(self, prob: _Problem):
        self.prob = prob
        self.extra = prob.extra_columns()
        self.y = prob.target()
        self.inv = np.concatenate([1.0 / prob.storage, 1.0 / prob.loss])[:, None]
        self.n = prob.omega.size
        self.free: np.ndarray | None = None
        self.c = np.zeros(0)

    def solve(self, ln_tau: np.ndarray, deriv: bool) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
        """Residual, linear coefficients and (with ``deriv``) the Jacobian at the log-times ``ln_tau``."""
        r, c, jacobian = self._evaluate(ln_tau)
        return r, c, (jacobian() if deriv else None)

    def _evaluate(self, ln_tau: np.ndarray) -> tuple[np.ndarray, np.ndarray, Callable[[], np.ndarray]]:
        """Residual, linear coefficients and the function giving the Jacobian at the log-times ``ln_tau``."""
        m = ln_tau.size
        K, d = kernel_values(self.prob.omega, np.exp(ln_tau))
        B = np.hstack([K * self.inv, self.extra])
        free = self.free if self.free is not None and self.free.size == B.shape[1] else None
        c, free, factor = nnls_small(B, self.y, free)
        self.free, self.c = free, c
        r = B @ c - self.y

        def jacobian() -> np.ndarray:
            D = kernel_slopes(K, d) * self.inv  # ∂(mode column)/∂ln τ: each column depends on its own τ only
            dBt_r = np.zeros((B.shape[1], m))
            dBt_r[np.arange(m), np.arange(m)] = r @ D
            return projected_jacobian(B, c, free, r, D * c[:m], dBt_r, factor)

        return r, c, jacobian

    def __call__(self, ln_tau: np.ndarray) -> tuple[np.ndarray, Callable[[], np.ndarray]]:
        r, _, jacobian = self._evaluate(ln_tau)
        return r, jacobian
