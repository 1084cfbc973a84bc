"""Generators of synthetic sweeps from published models, for the tests only.

Each returns exact moduli from a model; noise is multiplicative and seeded.
"""

from __future__ import annotations

import math

import numpy as np

from tauspec.data.sweep import Sweep
from tauspec.spectrum.kernels import log_grid, modes_moduli, spectrum_moduli


def lognormal_H(tau, G_t=1.0, tau_m=1.0, sigma=1.2):
    """Log-normal spectrum H = G_t/(σ√(2π)) exp(−ln²(τ/τ_m)/(2σ²)) (docs/references.md)."""
    return G_t / (sigma * math.sqrt(2 * math.pi)) * np.exp(-np.log(np.asarray(tau) / tau_m) ** 2 / (2 * sigma**2))


def lognormal_moduli(omega, G_t=1.0, tau_m=1.0, sigma=1.2, eta_s=0.0):
    """G', G'' of a log-normal spectrum by a fine trapezoid rule in ln τ (error < 1e-9 relative)."""
    tau = log_grid(tau_m * math.exp(-12 * sigma), tau_m * math.exp(12 * sigma), 4001)
    return spectrum_moduli(omega, tau, lognormal_H(tau, G_t, tau_m, sigma), eta_s=eta_s)


def rouse_times(tau_1, N):
    """Finite-N Rouse times τ_p = τ_1 sin²(π/(2(N+1)))/sin²(pπ/(2(N+1))) (Rouse 1953)."""
    p = np.arange(1, N + 1)
    return tau_1 * np.sin(math.pi / (2 * (N + 1))) ** 2 / np.sin(p * math.pi / (2 * (N + 1))) ** 2


def noisy_sweep(omega, storage, loss, noise, seed, name="synthetic"):
    """A Sweep with multiplicative Gaussian noise of relative size ``noise``."""
    rng = np.random.default_rng(seed)
    n = len(omega)
    return Sweep(omega=omega, storage=storage * (1 + noise * rng.standard_normal(n)),
                 loss=loss * (1 + noise * rng.standard_normal(n)), name=name)


def lognormal_sweep(seed, noise=0.01, sigma=1.2, G_t=1e4, tau_m=1.0, eta_s=0.0, wmin=1e-3, wmax=1e3, n=60):
    """Noisy sweep of a log-normal spectrum over [wmin, wmax]."""
    w = np.geomspace(wmin, wmax, n)
    gp, gpp = lognormal_moduli(w, G_t, tau_m, sigma, eta_s)
    return noisy_sweep(w, gp, gpp, noise, seed, name=f"lognormal-{seed}")


def bsw_H(tau, G_N=1.0, tau_max=1.0, n_e=0.23, n_g=0.67, tau_c=None):
    """BSW-form spectrum (Baumgaertel, Schausberger & Winter 1990); without tau_c only the entanglement part."""
    tau = np.asarray(tau, dtype=float)
    H = G_N * n_e * (tau / tau_max) ** n_e
    if tau_c is not None:
        H = H + G_N * n_g * (tau / tau_c) ** (-n_g)
    return np.where(tau <= tau_max, H, 0.0)


def maxwell_sweep(seed, g=1e3, tau=1.0, eta_s=0.0, noise=0.01, wmin=1e-2, wmax=1e2, n=40):
    """Noisy sweep of one Maxwell mode plus solvent."""
    w = np.geomspace(wmin, wmax, n)
    gp, gpp = modes_moduli(w, [g], [tau], eta_s=eta_s)
    return noisy_sweep(w, gp, gpp, noise, seed, name=f"maxwell-{seed}")


def rouse_sweep(seed, G0=1e3, tau_1=10.0, N=200, eta_s=0.0, noise=0.01, wmin=1e-3, wmax=1e3, n=61):
    """Noisy sweep of a finite Rouse chain: N modes of modulus G0 at the times of :func:`rouse_times`."""
    w = np.geomspace(wmin, wmax, n)
    gp, gpp = modes_moduli(w, np.full(N, G0), rouse_times(tau_1, N), eta_s=eta_s)
    return noisy_sweep(w, gp, gpp, noise, seed, name=f"rouse-{seed}")
