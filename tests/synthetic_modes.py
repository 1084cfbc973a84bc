"""Synthetic sweeps for the mode and derived-quantity tests (invented data, exact forward model)."""

from __future__ import annotations

import numpy as np

from tauspec.kernels import modes_moduli, spectrum_moduli
from tauspec.sweep import Sweep


def noisy_sweep(omega, storage, loss, seed, level=0.01, name="synthetic"):
    """Multiply G' and G'' by independent (1 + level·N(0,1)) factors, seeded."""
    rng = np.random.default_rng(seed)
    return Sweep(omega=omega, storage=storage * (1 + level * rng.standard_normal(omega.size)),
                 loss=loss * (1 + level * rng.standard_normal(omega.size)), name=name)


def rouse_times(tau1, n):
    """Finite-chain Rouse times τ_p = τ_1 sin²(π/(2(N+1)))/sin²(pπ/(2(N+1))) (Rouse 1953; Ferry 1980 ch. 9)."""
    p = np.arange(1, n + 1)
    return tau1 * np.sin(np.pi / (2 * (n + 1))) ** 2 / np.sin(p * np.pi / (2 * (n + 1))) ** 2


def rouse_sweep(omega, G0, tau1, n, eta_s, seed, level=0.01):
    tau = rouse_times(tau1, n)
    gp, gpp = modes_moduli(omega, np.full(n, G0), tau, eta_s=eta_s)
    return noisy_sweep(omega, gp, gpp, seed, level, name="rouse")


def lognormal_H(tau, G_t, tau_m, sigma):
    """H = G_t/(σ√(2π)) exp(−ln²(τ/τ_m)/(2σ²))."""
    return G_t / (sigma * np.sqrt(2 * np.pi)) * np.exp(-np.log(tau / tau_m) ** 2 / (2 * sigma**2))


def lognormal_sweep(omega, G_t, tau_m, sigma, seed, level=0.01):
    tau = np.geomspace(tau_m * np.exp(-9 * sigma), tau_m * np.exp(9 * sigma), 1201)
    gp, gpp = spectrum_moduli(omega, tau, lognormal_H(tau, G_t, tau_m, sigma))
    return noisy_sweep(omega, gp, gpp, seed, level, name="lognormal")
