"""Generators of synthetic sweeps for the bead-spring diagnosis tests (exact model moduli plus noise).

Each generator draws its parameters from the seed so that the verdict is checked on many unseen cases.
Models: Rouse 1953 (finite-N sine form), Zimm 1956 (τ_p = τ_1 p^(−3ν)), Baumgaertel, Schausberger & Winter
1990 (BSW spectrum; form as in docs/references.md, from memory), Winter & Chambon 1986 (critical gel), the
single Maxwell mode and the log-normal spectrum (Ferry 1980, ch. 3).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.special import gamma

from tauspec.data.sweep import Sweep
from tauspec.models.chains import chain_moduli, rouse_moduli
from tauspec.spectrum.kernels import log_grid, modes_moduli, spectrum_moduli


def _noisy(w, gp, gpp, noise, rng, name):
    return Sweep(omega=w, storage=gp * (1 + noise * rng.standard_normal(len(w))),
                 loss=gpp * (1 + noise * rng.standard_normal(len(w))), name=name)


def _solvent(gpp_top: float, w_top: float, share: float) -> float:
    """η_s such that the solvent carries ``share`` of G'' at ω_max."""
    return share / (1 - share) * gpp_top / w_top


def rouse_sweep(seed: int, *, N: int | None = None):
    """Exact finite-N Rouse chain: N 15–200, 1–3 % noise, terminal zone and 2–3 decades beyond ω τ_1 = 1,
    solvent 5–30 % of G'' at ω_max, 6–10 points per decade.  Returns (sweep, truth)."""
    rng = np.random.default_rng(seed)
    N = int(rng.integers(15, 201)) if N is None else N
    noise = rng.uniform(0.01, 0.03)
    share = rng.uniform(0.05, 0.30)
    tau1 = 10 ** rng.uniform(-2, 2)
    G0 = 10 ** rng.uniform(0, 4)
    wmin = 10 ** rng.uniform(-2.3, -1.5) / tau1
    wmax = 10 ** rng.uniform(2, 3) / tau1
    w = np.geomspace(wmin, wmax, int(rng.integers(6, 11) * math.log10(wmax / wmin)))
    gp, gpp = rouse_moduli(w, G0, tau1, N)
    eta = _solvent(gpp[-1], wmax, share)
    return _noisy(w, gp, gpp + eta * w, noise, rng, f"rouse-{seed}"), {"N": N, "tau1": tau1, "G0": G0, "eta": eta}


def zimm_sweep(seed: int, nu: float):
    """Zimm chain τ_p = τ_1 p^(−3ν), p = 1…N (N 30–300), same window and noise ranges as rouse_sweep."""
    rng = np.random.default_rng(seed)
    N = int(rng.integers(30, 301))
    noise = rng.uniform(0.01, 0.03)
    share = rng.uniform(0.05, 0.30)
    tau1 = 10 ** rng.uniform(-3, 1)
    G0 = 10 ** rng.uniform(-1, 2)
    wmin = 10 ** rng.uniform(-2.3, -1.5) / tau1
    wmax = 10 ** rng.uniform(2, 3) / tau1
    w = np.geomspace(wmin, wmax, int(rng.integers(6, 11) * math.log10(wmax / wmin)))
    gp, gpp = chain_moduli(w, G0, tau1, N, a=3 * nu, form="power")
    eta = _solvent(gpp[-1], wmax, share)
    return _noisy(w, gp, gpp + eta * w, noise, rng, f"zimm-{seed}"), {"N": N, "tau1": tau1, "a": 3 * nu}


def bsw_sweep(seed: int):
    """BSW entangled spectrum H = G_N [n_e (τ/τ_max)^n_e + n_g (τ/τ_c)^(−n_g)], τ ≤ τ_max (n_e 0.23, n_g 0.67),
    τ_max/τ_c 10^4–10^6, window from ω τ_max = 0.01–0.1 (terminal zone) to 10^2.5–10^4 (the plateau, where G'
    has reached ≈ 0.6–0.9 G_N), 1–3 % noise."""
    rng = np.random.default_rng(seed)
    GN = 10 ** rng.uniform(4, 6)
    tmax = 10 ** rng.uniform(-1, 2)
    tc = tmax * 10 ** -rng.uniform(4, 6)
    ne, ng = 0.23, 0.67
    tau = log_grid(tc / 100, tmax, 700)
    H = GN * (ne * (tau / tmax) ** ne + ng * (tau / tc) ** (-ng))
    wmin = 10 ** rng.uniform(-2, -1) / tmax
    wmax = 10 ** rng.uniform(2.5, 4) / tmax
    w = np.geomspace(wmin, wmax, int(rng.integers(6, 11) * math.log10(wmax / wmin)))
    gp, gpp = spectrum_moduli(w, tau, H)
    return _noisy(w, gp, gpp, rng.uniform(0.01, 0.03), rng, f"bsw-{seed}"), {}


def gel_sweep(seed: int, n: float):
    """Critical gel G' = S Γ(1−n) cos(nπ/2) ω^n, G'' = G' tan(nπ/2) (Winter & Chambon 1986), 2–5 decades."""
    rng = np.random.default_rng(seed)
    S = 10 ** rng.uniform(1, 4)
    w = np.geomspace(10 ** rng.uniform(-2, 0), 10 ** rng.uniform(2, 3), int(rng.integers(30, 50)))
    gp = S * gamma(1 - n) * math.cos(n * math.pi / 2) * w**n
    return _noisy(w, gp, gp * math.tan(n * math.pi / 2), rng.uniform(0.01, 0.03), rng, f"gel-{n}-{seed}"), {}


def maxwell_sweep(seed: int):
    """One Maxwell mode (g, τ) with a small solvent viscosity, window from the terminal zone to ω τ = 30–1000."""
    rng = np.random.default_rng(seed)
    g = 10 ** rng.uniform(1, 4)
    tau = 10 ** rng.uniform(-2, 2)
    w = np.geomspace(10 ** rng.uniform(-2.3, -1.5) / tau, 10 ** rng.uniform(1.5, 3) / tau, 40)
    gp, gpp = modes_moduli(w, [g], [tau], eta_s=0.01 * g * tau)
    return _noisy(w, gp, gpp, rng.uniform(0.01, 0.03), rng, f"maxwell-{seed}"), {}


def lognormal_sweep(seed: int):
    """Log-normal spectrum H = G_t/(σ√(2π)) exp(−ln²(τ/τ_m)/(2σ²)), σ 0.8–2, window 10^−2 … 10^3 / τ_m."""
    rng = np.random.default_rng(seed)
    Gt = 10 ** rng.uniform(1, 4)
    tm = 10 ** rng.uniform(-2, 2)
    sigma = rng.uniform(0.8, 2.0)
    tau = log_grid(tm * math.exp(-9 * sigma), tm * math.exp(9 * sigma), 900)
    H = Gt / (sigma * math.sqrt(2 * math.pi)) * np.exp(-np.log(tau / tm) ** 2 / (2 * sigma**2))
    w = np.geomspace(10 ** rng.uniform(-2.5, -1.5) / tm, 10 ** rng.uniform(2, 3) / tm, 40)
    gp, gpp = spectrum_moduli(w, tau, H)
    return _noisy(w, gp, gpp, rng.uniform(0.01, 0.02), rng, f"lognormal-{seed}"), {"sigma": sigma}


# --------------------------------------------------------------------------- issue 16: forms, melts, nonsense
def chain_form_sweep(seed: int, a: float, form: str, N: int, reach: bool, *, noise: float = 0.01,
                     tau1: float = 1.0, G0: float = 1e3, share: float = 0.1):
    """A chain in one form (``"sine"``: discrete chain, ``"power"``: continuum law τ_p = τ_1 p^(−a)), equal mode
    strengths G0 (Rouse 1953; Zimm 1956), from ωτ_1 = 0.01 to ω_max τ_N = 30 (``reach``: the window reaches the
    shortest modes) or 0.03 (it does not), 8 points per decade, solvent ``share`` of G'' at ω_max."""
    from tauspec.models.chains import mode_times

    tN = mode_times(tau1, N, a, form)[-1]
    wmax = (30.0 if reach else 0.03) / tN
    wmin = 1e-2 / tau1
    w = np.geomspace(wmin, wmax, int(8 * math.log10(wmax / wmin)))
    gp, gpp = chain_moduli(w, G0, tau1, N, a=a, form=form)
    eta = _solvent(gpp[-1], wmax, share) if share else 0.0
    rng = np.random.default_rng(seed)
    return _noisy(w, gp, gpp + eta * w, noise, rng, f"{form}-{a:g}-{N}-{'reach' if reach else 'short'}"), \
        {"tau1": tau1, "G0": G0, "N": N}


def bsw_melt_sweep(seed: int, *, G_N: float = 1e6, tau_max: float = 1.0, tc_ratio: float = 1e7, wmin: float = 1e-2,
                   wmax: float = 1e3, per_decade: int = 8, noise: float | None = None):
    """BSW melt H = G_N [n_e (τ/τ_max)^n_e + n_g (τ/τ_c)^(−n_g)], τ ≤ τ_max, n_e = 0.23, n_g = 0.67
    (Baumgaertel, Schausberger & Winter 1990; form from memory), τ_c = τ_max/``tc_ratio``; moduli by the trapezoid
    rule on 3000 points in ln τ from min(τ_c/1000, 10⁻⁹/ω_max) (the transition part converges slowly at short τ:
    its G'' share below τ_l is ≈ (ωτ_l)^(1−n_g)).  Noise 1–3 % by seed unless given."""
    tc = tau_max / tc_ratio
    tau = log_grid(min(tc / 1e3, 1e-9 / wmax), tau_max, 3000)
    H = G_N * (0.23 * (tau / tau_max) ** 0.23 + 0.67 * (tau / tc) ** (-0.67))
    w = np.geomspace(wmin, wmax, int(per_decade * math.log10(wmax / wmin)))
    gp, gpp = spectrum_moduli(w, tau, H)
    rng = np.random.default_rng(seed)
    return _noisy(w, gp, gpp, 0.01 + 0.01 * (seed % 3) if noise is None else noise, rng, f"bsw-melt-{seed}"), \
        {"G_N": G_N, "tau_max": tau_max}


#: A branched LDPE melt at 150 °C as 8 Maxwell modes (Laun 1978, Rheol. Acta 17:1, "melt I"; values from memory,
#: not re-read: used only as a realistic broad, branched-melt spectrum, no published number of it is asserted).
LDPE_G = (1.29e5, 9.48e4, 5.86e4, 2.67e4, 9.80e3, 1.89e3, 1.80e2, 1.00e0)
LDPE_TAU = (1e-4, 1e-3, 1e-2, 1e-1, 1.0, 10.0, 100.0, 1000.0)


def ldpe_sweep(seed: int, wmin: float = 1e-2, wmax: float = 1e2, noise: float = 0.01):
    """The LDPE modes above over [wmin, wmax], 8 points per decade."""
    w = np.geomspace(wmin, wmax, int(8 * math.log10(wmax / wmin)))
    gp, gpp = modes_moduli(w, LDPE_G, LDPE_TAU)
    return _noisy(w, gp, gpp, noise, np.random.default_rng(seed), f"ldpe-{seed}"), {}
