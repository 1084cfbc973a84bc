"""Maxwell kernels and the forward model of linear viscoelasticity.

For a continuous relaxation spectrum H(τ) on a logarithmic grid and for
discrete Maxwell modes (g_i, τ_i),

    G'(ω)  = G_e + ∫ H(τ) ω²τ²/(1 + ω²τ²) d ln τ      (≈ Σ g_i ω²τ_i²/(1 + ω²τ_i²))
    G''(ω) = η_s ω + ∫ H(τ) ωτ/(1 + ω²τ²) d ln τ       (≈ Σ g_i ωτ_i/(1 + ω²τ_i²))

References
----------
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., ch. 3 and 4.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "storage_kernel",
    "loss_kernel",
    "log_grid",
    "quadrature_weights",
    "spectrum_matrix",
    "spectrum_moduli",
    "modes_moduli",
    "kernel_values",
    "kernel_slopes",
]


def storage_kernel(x: np.ndarray) -> np.ndarray:
    """Return K'(x) = x²/(1 + x²) with x = ωτ, computed without overflow."""
    x = np.asarray(x, dtype=float)
    return _safe_storage(np.atleast_1d(x)).reshape(x.shape)


def _safe_storage(x: np.ndarray) -> np.ndarray:
    out = np.empty_like(x)
    big = x > 1.0
    xi = 1.0 / x[big]
    out[big] = 1.0 / (1.0 + xi * xi)
    xs = x[~big]
    out[~big] = xs * xs / (1.0 + xs * xs)
    return out


def loss_kernel(x: np.ndarray) -> np.ndarray:
    """Return K''(x) = x/(1 + x²) with x = ωτ, computed without overflow."""
    x = np.asarray(x, dtype=float)
    big = x > 1.0
    safe = np.where(big, x, 2.0)  # no division by 0 or overflow in either branch
    small = np.where(big, 0.0, x)
    inv = 1.0 / safe
    return np.where(big, inv / (1.0 + inv * inv), small / (1.0 + small * small))


def log_grid(tau_min: float, tau_max: float, n: int) -> np.ndarray:
    """Return ``n`` relaxation times spaced uniformly in ln τ from tau_min to tau_max."""
    return np.geomspace(tau_min, tau_max, n)


def quadrature_weights(tau: np.ndarray) -> np.ndarray:
    """Trapezoid weights in ln τ for a grid uniform in ln τ (half weight at the ends)."""
    u = np.log(tau)
    w = np.empty_like(u)
    if len(u) == 1:
        w[:] = 1.0
        return w
    d = np.diff(u)
    w[0] = d[0] / 2
    w[-1] = d[-1] / 2
    w[1:-1] = (d[:-1] + d[1:]) / 2
    return w


def spectrum_matrix(omega: np.ndarray, tau: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return the matrices (K', K'') mapping grid values of H to G', G''.

    ``K'[i, j] = w_j K'(ω_i τ_j)`` with the trapezoid weights ``w_j`` in ln τ,
    so that ``K' @ H`` approximates ∫ H(τ) ω²τ²/(1+ω²τ²) d ln τ.
    """
    x = np.outer(omega, tau)
    w = quadrature_weights(tau)
    return _safe_storage(x) * w, loss_kernel(x) * w


def spectrum_moduli(
    omega: np.ndarray,
    tau: np.ndarray,
    H: np.ndarray,
    *,
    eta_s: float = 0.0,
    G_e: float = 0.0,
) -> tuple[np.ndarray, np.ndarray]:
    """Return (G', G'') of a continuous spectrum H on the log grid ``tau``.

    The integral is the trapezoid rule in ln τ; add ``G_e`` to G' and
    ``eta_s·ω`` to G''.
    """
    omega = np.asarray(omega, dtype=float)
    Kp, Kpp = spectrum_matrix(omega, np.asarray(tau, dtype=float))
    H = np.asarray(H, dtype=float)
    return Kp @ H + G_e, Kpp @ H + eta_s * omega


def modes_moduli(
    omega: np.ndarray,
    g: np.ndarray,
    tau: np.ndarray,
    *,
    eta_s: float = 0.0,
    G_e: float = 0.0,
) -> tuple[np.ndarray, np.ndarray]:
    """Return (G', G'') of discrete Maxwell modes.

    G'(ω) = G_e + Σ g_i (ωτ_i)²/(1 + (ωτ_i)²),  G''(ω) = η_s ω + Σ g_i ωτ_i/(1 + (ωτ_i)²)
    (Ferry 1980, ch. 3, the generalized Maxwell model).
    """
    omega = np.asarray(omega, dtype=float)
    x = np.outer(omega, np.asarray(tau, dtype=float))
    g = np.asarray(g, dtype=float)
    return _safe_storage(x) @ g + G_e, loss_kernel(x) @ g + eta_s * omega


def kernel_values(omega: np.ndarray, tau: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return the stacked Maxwell kernels [K'; K''] at x = ω τ (rows ω, columns τ) and 1/(1 + x²).

    K' = x²/(1 + x²), K'' = x/(1 + x²) (Ferry 1980, ch. 3).  The second array, 1 − K' computed without
    cancellation, is what :func:`kernel_slopes` needs to differentiate them later.  For x beyond about 1e150
    (far outside any sweep) x² overflows; the fits keep ωτ within 1e30.
    """
    x = np.multiply.outer(np.asarray(omega, dtype=float), np.asarray(tau, dtype=float))
    m = x.shape[0]
    x2 = x * x
    d = x2 + 1.0
    np.reciprocal(d, out=d)  # 1/(1 + x²) = 1 − K'
    out = np.empty((2 * m, x.shape[1]))
    np.multiply(x2, d, out=out[:m])
    np.multiply(x, d, out=out[m:])
    return out, d


def kernel_slopes(values: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Return [∂K'/∂ln τ; ∂K''/∂ln τ] from the kernels [K'; K''] and 1/(1 + x²) of :func:`kernel_values`.

    Differentiating in ln τ (x ∂/∂x) gives the closed forms ∂K'/∂ln τ = 2K'(1 − K') and
    ∂K''/∂ln τ = K''(1 − 2K'), which the variable-projection fits of modes and chains use as their analytic
    Jacobians.
    """
    m = d.shape[0]
    kp, kpp = values[:m], values[m:]
    out = np.empty_like(values)
    dp, dpp = out[:m], out[m:]
    np.multiply(kp, d, out=dp)
    dp *= 2.0
    np.subtract(d, kp, out=dpp)  # 1 − 2K'
    dpp *= kpp
    return out
