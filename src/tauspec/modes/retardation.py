"""The exact retardation spectrum of a set of Maxwell modes and the creep compliance it gives."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..data.record import record
from ..errors import SettingsError

__all__ = ["Retardation", "retardation_spectrum"]


# --------------------------------------------------------------------------- retardation spectrum


@record
class Retardation:
    """The discrete retardation spectrum equivalent to a Maxwell mode set.

    J(t) = J_g + Σ_k J_k (1 − e^(−t/λ_k)) + t/η0   (the last term for fluids only).

    Attributes
    ----------
    J_g : float
        Glassy (instantaneous) compliance, 1/Pa; 0 with a solvent viscosity.
    lam, J : ndarray
        Retardation times λ_k (s) and strengths J_k (1/Pa).
    eta0 : float
        Zero-shear viscosity (inf for a solid, G_e > 0).
    """

    J_g: float
    lam: np.ndarray
    J: np.ndarray
    eta0: float

    @property
    def fluid(self) -> bool:
        """True when the set flows (G_e = 0)."""
        return math.isfinite(self.eta0)

    @property
    def Je0(self) -> float:
        """Steady-state compliance J_g + Σ J_k (the equilibrium compliance 1/G_e for a solid)."""
        return float(self.J_g + np.sum(self.J))

    def compliance(self, t: np.ndarray) -> np.ndarray:
        """Return the creep compliance J(t) in 1/Pa at times ``t`` ≥ 0 (s)."""
        t = np.asarray(t, dtype=float)
        tt = np.atleast_1d(t)
        out = self.J_g + (-np.expm1(-np.outer(tt, 1.0 / self.lam))) @ self.J if self.lam.size else \
            np.full(tt.shape, self.J_g)
        if self.fluid:
            out = out + tt / self.eta0
        return out.reshape(t.shape)



def _bracketed_root(F: Any, a: float, b: float) -> float:
    """Root of a function decreasing from +∞ (just above a) to a negative value or −∞ (just below b)."""
    from scipy.optimize import brentq

    lo = max(a + (b - a) * 1e-15, float(np.nextafter(a, math.inf)))
    hi = min(b - (b - a) * 1e-15, float(np.nextafter(b, -math.inf)))
    if F(lo) <= 0.0:  # the root sits within rounding of the pole at a
        return lo
    if F(hi) >= 0.0:
        return hi
    return float(brentq(F, lo, hi, xtol=1e-300, rtol=4 * np.finfo(float).eps, maxiter=400))


def retardation_spectrum(g: np.ndarray, tau: np.ndarray, *, eta_s: float = 0.0, G_e: float = 0.0) -> Retardation:
    """Return the exact discrete retardation spectrum of a Maxwell mode set.

    In the Laplace domain the creep compliance is Ĵ(s) = 1/(s Q(s)) with the
    operator modulus Q(s) = s Ĝ(s) = G_e + η_s s + Σ g_i sτ_i/(1 + sτ_i).
    Q increases monotonically between its poles s = −1/τ_i, so it has exactly
    one zero between neighbouring poles, one below the fastest pole when
    η_s > 0 and one above the slowest pole when G_e > 0; the zeros
    s = −1/λ_k are the retardation rates.  The partial-fraction residues give
    J_k = λ_k / Q'(−1/λ_k) with Q'(s) = η_s + Σ g_i τ_i/(1 + sτ_i)²; J_g = 1/Q(∞)
    (0 when η_s > 0); for a fluid the double pole at s = 0 gives t/η0.

    Parameters
    ----------
    g, tau : array_like
        Mode strengths (Pa) and relaxation times (s).
    eta_s, G_e : float
        Solvent viscosity (Pa·s) and equilibrium modulus (Pa).

    Returns
    -------
    Retardation

    References
    ----------
    Tschoegl, N. W. (1989). *The Phenomenological Theory of Linear Viscoelastic Behavior*,
    Springer (discrete spectra, interconversion through the zeros and poles; chapter from memory).
    Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., ch. 3
    (∫₀ᵗ G(s) J(t − s) ds = t).
    """
    g = np.asarray(g, dtype=float)
    tau = np.asarray(tau, dtype=float)
    keep = g > 0
    g, tau = g[keep], tau[keep]
    # drop strengths far below the rest: their zero and pole coincide to machine precision
    if g.size:
        keep = g > 1e-14 * g.max()
        g, tau = g[keep], tau[keep]
    order = np.argsort(tau)[::-1]  # rates a_i = 1/τ_i ascending
    g, tau = g[order], tau[order]
    a = 1.0 / tau
    if np.any(np.diff(a) <= 0):
        raise SettingsError("two Maxwell modes share one relaxation time; merge them first")
    if g.size == 0 and eta_s <= 0 and G_e <= 0:
        raise SettingsError("the mode set is empty: no modes, no solvent viscosity, no equilibrium modulus")

    def F(x: float) -> float:  # Q(−x)/x; roots are retardation rates x = 1/λ
        return G_e / x - eta_s + float(np.sum(g / (x - a)))

    roots: list[float] = []
    if G_e > 0 and a.size:
        roots.append(_bracketed_root(F, 0.0, a[0]))
    for lo, hi in zip(a[:-1], a[1:]):
        roots.append(_bracketed_root(F, lo, hi))
    if eta_s > 0 and a.size:
        top = a[-1] + (float(np.sum(g)) + G_e) / eta_s  # F < 0 beyond this rate
        roots.append(_bracketed_root(F, a[-1], top * (1 + 1e-9)))
    if G_e > 0 and not a.size and eta_s > 0:  # Kelvin–Voigt: a single retardation G_e/η_s
        roots.append(G_e / eta_s)
    x = np.array(roots, dtype=float)
    dQ = eta_s + np.array([float(np.sum(g * a / (xk - a) ** 2)) for xk in x])
    J = 1.0 / (x * dQ) if x.size else np.array([])
    J_g = 0.0 if eta_s > 0 else 1.0 / (G_e + float(np.sum(g)))
    eta0 = math.inf if G_e > 0 else eta_s + float(np.sum(g * tau))
    lam = 1.0 / x if x.size else np.array([])
    order = np.argsort(lam)
    return Retardation(J_g=J_g, lam=lam[order], J=J[order], eta0=eta0)
