"""Bead-spring chains: the mode-time laws and the moduli of a chain.

Two forms of each law: the discrete chain (``"sine"``: the finite-N Rouse eigenvalue spacing raised to a/2;
a = 2 is Rouse 1953 exactly) and the continuum law (``"power"``: τ_p = τ_1 p^(−a); τ_R/p² is the Rouse law
handbooks write for N ≫ 1, Ferry 1980 ch. 9, Doi & Edwards 1986 ch. 4; τ_1 p^(−3ν) the Zimm law, Zimm 1956).
The exact Zimm eigenvalues of a finite chain need a numerical diagonalisation (Lodge & Wu 1971, from memory);
the discrete Zimm form here is the sine spacing with a = 3ν.  The forms differ only near the shortest modes.
"""

from __future__ import annotations

import math

import numpy as np

from ..spectrum.kernels import modes_moduli

__all__ = [
    "FORMS", "FORM_NAMES", "NU_GOOD", "N_MAX", "A_BOUNDS", "TAIL_EPS", "EXACT_MODES", "BIN_RATIO", "mode_times",
    "chain_moduli", "rouse_moduli", "zimm_moduli", "power_tail",
]


FORMS = ("sine", "power")

#: The plain name of each form: "discrete" chain (sine spacing) or "continuum" law (pure power of p).
FORM_NAMES = {"sine": "discrete", "power": "continuum"}

#: Flory exponent of a chain in good solvent (renormalization-group value; Rubinstein & Colby 2003, ch. 8).
NU_GOOD = 0.588

#: Largest N considered by the fits (a chain with more modes is indistinguishable within any sweep: its
#: fastest modes act like extra solvent viscosity).
N_MAX = 5000.0
A_BOUNDS = (1.0, 3.0)
#: modes with ω_max τ_p below this are summed in their low-frequency limit (relative error ≈ TAIL_EPS²).
TAIL_EPS = 1e-3
#: modes summed one by one; above this the sum over p uses bins of relative width BIN_RATIO − 1.
EXACT_MODES = 100
BIN_RATIO = 1.02


def mode_times(tau1: float, n: int, a: float = 2.0, form: str = "sine") -> np.ndarray:
    """Return the N mode relaxation times of a bead-spring chain, longest first.

    sine:  τ_p = τ_1 [sin(π/(2(N+1))) / sin(pπ/(2(N+1)))]^a ;  power:  τ_p = τ_1 p^(−a),  p = 1 … N.

    References
    ----------
    Rouse, P. E. (1953), J. Chem. Phys. 21, 1272 (a = 2, sine form); Zimm, B. H. (1956), J. Chem. Phys. 24, 269.
    """
    n = int(n)
    if n < 1:
        raise ValueError("a chain needs at least one mode")
    if form not in FORMS:
        raise ValueError(f"unknown form {form!r} (use one of {FORMS})")
    return _times_at(tau1, n, np.arange(1, n + 1, dtype=float), a, form)


def _mode_positions(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Mode indices p (possibly fractional) and multiplicities for summing over p = 1 … n.

    Modes up to :data:`EXACT_MODES` are taken one by one; above, consecutive modes are grouped in bins of
    relative width BIN_RATIO − 1 and each bin is represented by its midpoint times its count (the midpoint
    rule for a sum of a smooth function of p; the relative error is of order (Δ ln τ)²/24 ≈ 1e-4).
    """
    if n <= EXACT_MODES:
        return np.arange(1, n + 1, dtype=float), np.ones(n)
    edges = [EXACT_MODES]
    while edges[-1] < n:
        edges.append(min(n, max(edges[-1] + 1, int(edges[-1] * BIN_RATIO))))
    e = np.array(edges, dtype=float)
    lo, hi = e[:-1] + 1, e[1:]
    p = np.concatenate([np.arange(1, EXACT_MODES + 1, dtype=float), 0.5 * (lo + hi)])
    m = np.concatenate([np.ones(EXACT_MODES), hi - lo + 1])
    return p, m


def _times_at(tau1: float, n: int, p: np.ndarray, a: float, form: str) -> np.ndarray:
    if form == "sine":
        q = math.pi / (2 * (n + 1))
        return tau1 * (math.sin(q) / np.sin(p * q)) ** a
    return tau1 * p ** (-a)


def _unit_chain(omega: np.ndarray, tau1: float, n: int, a: float, form: str) -> tuple[np.ndarray, np.ndarray]:
    """Unit-G0 moduli of an integer chain; modes far faster than 1/ω_max enter in their low-ω limit."""
    p, mult = _mode_positions(n)
    tau = _times_at(tau1, n, p, a, form)
    wmax = float(np.max(omega))
    fast = tau * wmax < TAIL_EPS
    sp, spp = modes_moduli(omega, mult[~fast], tau[~fast])
    if np.any(fast):
        tail, mt = tau[fast], mult[fast]
        sp = sp + omega**2 * float(np.dot(mt, tail**2))
        spp = spp + omega * float(np.dot(mt, tail))
    return sp, spp


def _chain_unit(omega: np.ndarray, tau1: float, N: float, a: float, form: str) -> tuple[np.ndarray, np.ndarray]:
    """Unit-G0 moduli of a chain with a real number of modes N ≥ 1 (mixture of the neighbouring integers)."""
    N = min(max(float(N), 1.0), N_MAX)
    n = math.floor(N)
    f = N - n
    sp, spp = _unit_chain(omega, tau1, n, a, form)
    if f > 1e-12:
        sp1, spp1 = _unit_chain(omega, tau1, n + 1, a, form)
        sp = (1 - f) * sp + f * sp1
        spp = (1 - f) * spp + f * spp1
    return sp, spp


def power_tail(omega: np.ndarray, tau1: float, N: float, a: float) -> tuple[np.ndarray, np.ndarray]:
    """Unit-G0 moduli of the modes p > N of the infinite power law τ_p = τ_1 p^(−a) (a > 1).

    These are the modes a truncated (continuum-form) chain lacks against the N → ∞ law whose asymptotes
    (tan δ = tan(π/(2a)), G'' = (π/(2√2)) G0 (ωτ_1)^(1/2) for a = 2; Ferry 1980, ch. 9) the intermediate
    tests use.  Modes N < p ≤ 10⁶ are summed (binned as in :func:`chain_moduli`); beyond, in their
    low-frequency limit, Σ_{p>M} ωτ_p = ωτ_1 ζ(a, M+1) and Σ (ωτ_p)² = (ωτ_1)² ζ(2a, M+1) (Hurwitz ζ).
    """
    from scipy.special import zeta

    omega = np.asarray(omega, dtype=float)
    n = max(1, int(round(N)))
    big = max(10**6, 100 * n)
    sp_big, spp_big = _unit_chain(omega, tau1, big, a, "power")
    sp_n, spp_n = _unit_chain(omega, tau1, n, a, "power")
    x = omega * tau1
    return (sp_big - sp_n + x**2 * float(zeta(2 * a, big + 1)),
            spp_big - spp_n + x * float(zeta(a, big + 1)))


def chain_moduli(
    omega: np.ndarray,
    G0: float,
    tau1: float,
    N: float,
    *,
    a: float = 2.0,
    form: str = "sine",
    eta_s: float = 0.0,
) -> tuple[np.ndarray, np.ndarray]:
    """Return (G', G'') of a bead-spring chain with mode times from :func:`mode_times`.

    G' = G0 Σ (ωτ_p)²/(1+(ωτ_p)²),  G'' = η_s ω + G0 Σ ωτ_p/(1+(ωτ_p)²)  (Ferry 1980, ch. 9).
    A non-integer N = n + f gives (1 − f)·chain(n) + f·chain(n + 1).
    """
    omega = np.asarray(omega, dtype=float)
    sp, spp = _chain_unit(omega, tau1, N, a, form)
    return G0 * sp, G0 * spp + eta_s * omega


def rouse_moduli(omega: np.ndarray, G0: float, tau1: float, N: float, *, eta_s: float = 0.0):
    """Return (G', G'') of the exact finite Rouse chain (sine form, a = 2) plus solvent.

    τ_p = τ_1 sin²(π/(2(N+1))) / sin²(pπ/(2(N+1))), each mode G0 (Rouse 1953; Ferry 1980, ch. 9).
    """
    return chain_moduli(omega, G0, tau1, N, a=2.0, form="sine", eta_s=eta_s)


def zimm_moduli(omega: np.ndarray, G0: float, tau1: float, N: float, *, nu: float = 0.5, eta_s: float = 0.0):
    """Return (G', G'') of the Zimm chain τ_p = τ_1 p^(−3ν), p = 1 … N, plus solvent (Zimm 1956)."""
    return chain_moduli(omega, G0, tau1, N, a=3.0 * nu, form="power", eta_s=eta_s)
