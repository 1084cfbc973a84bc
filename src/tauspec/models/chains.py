"""Bead-spring chains: mode-time laws, the moduli of a chain and their analytic derivatives.

A chain is N Maxwell modes of equal modulus G0 at times τ_p = τ_1 ρ_p(N, a), p = 1 … N, plus a Newtonian
solvent.  A *mode-time law* gives ρ_p (at a = 1; the times are τ_1 ρ_p^a); the fits
(:mod:`tauspec.models.beadspring`) know nothing else about it, so a new form is one :class:`ModeTimeLaw`
added with :func:`register_law`.  Two forms of each law are built in: the discrete chain (``"sine"``: the
finite-N Rouse eigenvalue spacing raised to a/2; a = 2 is Rouse 1953 exactly) and the continuum law
(``"power"``: τ_p = τ_1 p^(−a); τ_R/p² is the Rouse law handbooks write for N ≫ 1, Ferry 1980 ch. 9, Doi &
Edwards 1986 ch. 4; τ_1 p^(−3ν) the Zimm law, Zimm 1956),

    "sine"  (discrete chain):   τ_p = τ_1 [sin(π/(2(N+1))) / sin(pπ/(2(N+1)))]^a
    "power" (continuum law):    τ_p = τ_1 p^(−a).

The exact Zimm eigenvalues of a finite chain need a numerical diagonalisation (Lodge & Wu 1971, from memory);
the discrete Zimm form here is the sine spacing with a = 3ν.  The forms differ only near the shortest modes.

The unit-modulus moduli S'(ω) = Σ_p K'(ωτ_p), S''(ω) = Σ_p K''(ωτ_p) with K' = x²/(1+x²), K'' = x/(1+x²),
x = ωτ (Ferry 1980, ch. 3 and 9), have closed-form derivatives

    ∂K'/∂ln τ = 2K'(1 − K'),   ∂K''/∂ln τ = K''(1 − 2K'),

so ∂S/∂ln τ_1 = Σ_p ∂K/∂ln τ_p and ∂S/∂a = Σ_p ∂K/∂ln τ_p · ln ρ_p.  A real N = n + f is the mixture
(1 − f)·chain(n) + f·chain(n + 1), so ∂S/∂ln N = N (S_{n+1} − S_n) (the right derivative at a whole number).

References
----------
Rouse, P. E. (1953). J. Chem. Phys. 21, 1272.
Zimm, B. H. (1956). J. Chem. Phys. 24, 269.
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., ch. 3 and 9.
"""

from __future__ import annotations

import dataclasses
import functools
import math
from collections.abc import Callable

import numpy as np

from ..spectrum.kernels import kernel_slopes, kernel_values

__all__ = [
    "FORMS", "FORM_NAMES", "NU_GOOD", "N_MAX", "A_BOUNDS", "TAIL_EPS", "EXACT_MODES", "BIN_RATIO", "ModeTimeLaw",
    "LAWS", "register_law", "get_law", "mode_positions", "Frame", "ChainTerms", "chain_columns", "chain_columns_lazy",
    "unit_chain", "tabulated_chains", "mode_times", "chain_moduli", "rouse_moduli", "zimm_moduli", "power_tail",
]

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


@dataclasses.dataclass(frozen=True)
class ModeTimeLaw:
    """A family of mode times τ_p = τ_1 ρ_p(n)^a, given by ``ratio(n, p)`` = ρ_p at a = 1.

    ``ratio`` must be positive, 1 at p = 1 and not increase with p.  ``nested`` says that ρ_p does not depend
    on n (the chain of n + 1 modes is the chain of n plus one mode).
    """

    name: str
    ratio: Callable[[int, np.ndarray], np.ndarray]
    nested: bool = False

    def times(self, tau1: float, n: int, p: np.ndarray, a: float) -> np.ndarray:
        """Return τ_p = τ_1 ρ_p^a at positions ``p`` of an n-mode chain."""
        return tau1 * self.ratio(n, p) ** a


def _sine_ratio(n: int, p: np.ndarray) -> np.ndarray:
    q = math.pi / (2 * (n + 1))
    return math.sin(q) / np.sin(p * q)


def _power_ratio(n: int, p: np.ndarray) -> np.ndarray:
    return 1.0 / p


#: name -> law; :func:`register_law` adds one.
LAWS: dict[str, ModeTimeLaw] = {
    "sine": ModeTimeLaw("sine", _sine_ratio),
    "power": ModeTimeLaw("power", _power_ratio, nested=True),
}


#: The built-in forms; :func:`register_law` adds more (``LAWS`` holds them all).
FORMS = tuple(LAWS)


def register_law(law: ModeTimeLaw) -> None:
    """Make ``law`` available by its name to :func:`mode_times`, :func:`chain_moduli` and the fits."""
    LAWS[law.name] = law


def get_law(form: str) -> ModeTimeLaw:
    """Return the law called ``form``; ValueError when there is none."""
    try:
        return LAWS[form]
    except KeyError:
        raise ValueError(f"unknown form {form!r} (use one of {tuple(LAWS)})") from None


@functools.cache
def _bin_edges(limit: int) -> np.ndarray:
    """The upper edges of the bins of :func:`mode_positions`, from EXACT_MODES until one reaches ``limit``.

    e_{k+1} = max(e_k + 1, ⌊e_k · BIN_RATIO⌋).  The sequence does not depend on the chain (a chain's last bin
    ends at its n instead), so it is built once per power of two of n (:func:`mode_positions` asks for the
    next one up) and kept, read-only.
    """
    edges = [EXACT_MODES]
    while edges[-1] < limit:
        edges.append(max(edges[-1] + 1, int(edges[-1] * BIN_RATIO)))
    out = np.array(edges)
    out.setflags(write=False)
    return out


@functools.lru_cache(maxsize=1024)
def mode_positions(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Mode indices p (possibly fractional) and multiplicities for summing over p = 1 … n.

    Modes up to :data:`EXACT_MODES` are taken one by one; above, consecutive modes are grouped in bins of
    relative width BIN_RATIO − 1 and each bin is represented by its midpoint times its count (the midpoint
    rule for a sum of a smooth function of p; the relative error is of order (Δ ln τ)²/24 ≈ 1e-4).
    The arrays are cached and read-only.
    """
    if n <= EXACT_MODES:
        p, m = np.arange(1, n + 1, dtype=float), np.ones(n)
    else:
        edges = _bin_edges(1 << (n - 1).bit_length())
        e = np.append(edges[: np.searchsorted(edges, n)], n).astype(float)
        lo, hi = e[:-1] + 1, e[1:]
        p = np.concatenate([np.arange(1, EXACT_MODES + 1, dtype=float), 0.5 * (lo + hi)])
        m = np.concatenate([np.ones(EXACT_MODES), hi - lo + 1])
    p.setflags(write=False)
    m.setflags(write=False)
    return p, m


@functools.lru_cache(maxsize=1024)
def _log_base(law: ModeTimeLaw, n: int) -> np.ndarray:
    lnb = np.log(law.ratio(n, mode_positions(n)[0]))
    lnb.setflags(write=False)
    return lnb


@dataclasses.dataclass(frozen=True)
class ChainTerms:
    """Unit-G0 moduli of a chain at the sweep's frequencies and, when asked, their derivatives.

    ``d_storage`` and ``d_loss`` have one column per parameter: ln τ_1, ln N, a (in that order).
    """

    storage: np.ndarray
    loss: np.ndarray
    d_storage: np.ndarray | None = None
    d_loss: np.ndarray | None = None


class Frame:
    """The frequencies of one sweep with the constants every chain evaluation on them needs."""

    def __init__(self, omega: np.ndarray):
        self.omega = np.asarray(omega, dtype=float)
        self.m = self.omega.size
        self.wmax = float(np.max(self.omega))
        zeros = np.zeros(self.m)
        # the low-frequency limits of fast modes: S' += ω² Στ², S'' += ω Στ (stacked as [S'; S''])
        self.q2 = np.concatenate([self.omega**2, zeros])
        self.q1 = np.concatenate([zeros, self.omega])


@functools.lru_cache(maxsize=512)
def _ratio_power(law: ModeTimeLaw, n: int, a: float) -> np.ndarray:
    """ρ_p^a of the n-mode chain at its mode positions (cached: the fixed-exponent models reuse it)."""
    out = law.ratio(n, mode_positions(n)[0]) ** a
    out.setflags(write=False)
    return out


@functools.lru_cache(maxsize=512)
def _pair_layout(law: ModeTimeLaw, n: int) -> tuple[np.ndarray, np.ndarray]:
    """The logarithms ln ρ (a = 1) of the modes of the chains n and n + 1, and their weights (a column each).

    A nested law whose n + 1 positions extend those of n shares the modes of the two chains.
    """
    p, m = mode_positions(n)
    p1, m1 = mode_positions(n + 1)
    if law.nested and n + 1 <= EXACT_MODES:
        w = np.zeros((n + 1, 2))
        w[:n, 0] = m
        w[:, 1] = m1
        lnb = _log_base(law, n + 1)
    else:
        w = np.zeros((p.size + p1.size, 2))
        w[: p.size, 0] = m
        w[p.size:, 1] = m1
        lnb = np.concatenate([_log_base(law, n), _log_base(law, n + 1)])
    lnb.setflags(write=False)
    w.setflags(write=False)
    return lnb, w


def _ratios(law: ModeTimeLaw, n: int, a: float, pair: bool) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """ρ^a, ln ρ and the weights of the n-mode chain (and of the n + 1 one with ``pair``)."""
    if not pair:
        return _ratio_power(law, n, a), _log_base(law, n), mode_positions(n)[1][:, None]
    lnb, w = _pair_layout(law, n)
    if law.nested and n + 1 <= EXACT_MODES:
        return _ratio_power(law, n + 1, a), lnb, w
    return np.concatenate([_ratio_power(law, n, a), _ratio_power(law, n + 1, a)]), lnb, w


def _chain_terms(frame: Frame, tau1: float, n: int, a: float, law: ModeTimeLaw,
                 pair: bool) -> tuple[np.ndarray, Callable[[], tuple[np.ndarray, np.ndarray]]]:
    """Unit-G0 moduli [S'; S''] of the n-mode chain (and the n + 1 one with ``pair``), and their derivatives.

    One column per chain; the function returned gives ∂/∂ln τ_1 and ∂/∂a in the same layout.  The
    derivatives are computed only when it is called (the fits need them only at the points they accept), from
    the kernels already at hand (:func:`~tauspec.spectrum.kernels.kernel_slopes`).  Modes with
    ω_max τ_p < TAIL_EPS enter in their low-frequency limit (ωτ_p)², ωτ_p.
    """
    rho, lnb, w = _ratios(law, n, a, pair)
    tau = tau1 * rho
    fast = tau * frame.wmax < TAIL_EPS
    tail = bool(fast.any())
    if tail:  # the kernels only of the slow modes; the fast ones by their sums
        wf = w[fast]
        tau_f, lnb_f = tau[fast], lnb[fast]
        t1, t2 = tau_f @ wf, (tau_f * tau_f) @ wf
        slow = ~fast
        tau, lnb, w = tau[slow], lnb[slow], w[slow]
    K, d = kernel_values(frame.omega, tau)
    vals = K @ w
    if tail:
        vals = vals + np.multiply.outer(frame.q2, t2) + np.multiply.outer(frame.q1, t1)

    def slopes() -> tuple[np.ndarray, np.ndarray]:
        c = w.shape[1]
        R = kernel_slopes(K, d) @ np.concatenate([w, w * lnb[:, None]], axis=1)
        dtau, da = R[:, :c], R[:, c:]
        if tail:
            dtau = dtau + np.multiply.outer(2.0 * frame.q2, t2) + np.multiply.outer(frame.q1, t1)
            da = (da + np.multiply.outer(2.0 * frame.q2, (tau_f * tau_f * lnb_f) @ wf)
                  + np.multiply.outer(frame.q1, (tau_f * lnb_f) @ wf))
        return dtau, da

    return vals, slopes


def chain_columns(frame: Frame, tau1: float, N: float, a: float, law: ModeTimeLaw,
                  deriv: bool = False) -> tuple[np.ndarray, np.ndarray | None]:
    """[S'; S''] of a chain with a real number of modes 1 ≤ N ≤ N_MAX (mixture of the neighbouring integers).

    With ``deriv`` also the derivatives in (ln τ_1, ln N, a), one column each; else None.
    """
    if deriv:
        vals, slopes = chain_columns_lazy(frame, tau1, N, a, law)
        return vals, slopes()
    N = min(max(float(N), 1.0), N_MAX)
    n = math.floor(N)
    f = N - n
    mixed = f > 1e-12
    vals = _chain_terms(frame, tau1, n, a, law, mixed)[0]
    return ((1 - f) * vals[:, 0] + f * vals[:, 1]) if mixed else vals[:, 0], None


def chain_columns_lazy(frame: Frame, tau1: float, N: float, a: float,
                       law: ModeTimeLaw) -> tuple[np.ndarray, Callable[[], np.ndarray]]:
    """[S'; S''] as :func:`chain_columns`, and a function giving the derivatives in (ln τ_1, ln N, a).

    The chain of N is the mixture (1 − f)·chain(n) + f·chain(n + 1) with n = ⌊N⌋, f = N − n, so
    ∂/∂ln N = N (chain(n + 1) − chain(n)); at N_MAX the left derivative is used.
    """
    N = min(max(float(N), 1.0), N_MAX)
    n = math.floor(N)
    f = N - n
    top = n + 1 > N_MAX  # at N_MAX: the left derivative in N
    vals, slopes = _chain_terms(frame, tau1, n - 1 if top else n, a, law, True)
    if top:
        mix = np.array([0.0, 1.0])
    elif f > 1e-12:
        mix = np.array([1 - f, f])
    else:
        mix = np.array([1.0, 0.0])

    def derivatives() -> np.ndarray:
        dtau, da = slopes()
        return np.column_stack([dtau @ mix, N * (vals[:, 1] - vals[:, 0]), da @ mix])

    return vals @ mix, derivatives


def unit_chain(omega: np.ndarray, tau1: float, N: float, a: float, law: ModeTimeLaw,
               deriv: bool = False) -> ChainTerms:
    """Unit-G0 moduli of a chain with a real number of modes 1 ≤ N ≤ N_MAX (mixture of neighbouring integers).

    With ``deriv`` the derivatives in ln τ_1, ln N and a are returned too.
    """
    frame = Frame(omega)
    v, dv = chain_columns(frame, tau1, N, a, law, deriv)
    m = frame.m
    if dv is None:
        return ChainTerms(storage=v[:m], loss=v[m:])
    return ChainTerms(storage=v[:m], loss=v[m:], d_storage=dv[:m], d_loss=dv[m:])


# ------------------------------------------------------------------------------------ tables for starts

#: spacing in u = ln(ωτ_1) of the tabulated unit chains used to score starting values
_TABLE_STEP = 0.05
_TABLE_LO = -8.0


@functools.lru_cache(maxsize=16)
def _grid_table(law: ModeTimeLaw, a: float, ns: tuple[int, ...]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """S'(u), S''(u) of the unit chains of ``ns`` modes on a common grid of u = ln(ωτ_1) (rows: chains).

    Also the sums (Σρ², Σρ, Σ1, Σρ⁻², Σρ⁻¹) of each chain, for the asymptotes outside the grid:
    S' = e^(2u) Σρ², S'' = e^u Σρ below it; S' = Σ1 − e^(−2u) Σρ⁻², S'' = e^(−u) Σρ⁻¹ above it.
    """
    rhos = [law.ratio(n, mode_positions(n)[0]) ** a for n in ns]
    u_hi = 7.0 - math.log(min(float(r.min()) for r in rhos))
    u = np.arange(_TABLE_LO, u_hi + _TABLE_STEP, _TABLE_STEP)
    eu = np.exp(u)
    sp = np.empty((len(ns), u.size))
    spp = np.empty((len(ns), u.size))
    sums = np.empty((len(ns), 5))
    for i, (n, rho) in enumerate(zip(ns, rhos)):
        m = mode_positions(n)[1]
        x = np.multiply.outer(eu, rho)
        x2 = x * x
        d = 1.0 / (1.0 + x2)
        sp[i] = (x2 * d) @ m
        spp[i] = (x * d) @ m
        sums[i] = (m @ rho**2, m @ rho, m.sum(), m @ rho**-2, m @ (1.0 / rho))
    for arr in (sp, spp, sums):
        arr.setflags(write=False)
    return sp, spp, sums


def tabulated_chains(u: np.ndarray, ns: tuple[int, ...], a: float, law: ModeTimeLaw) -> tuple[np.ndarray, np.ndarray]:
    """Unit moduli of the chains of ``ns`` modes at u = ln(ωτ_1), shape (len(ns),) + u.shape.

    Linear interpolation of a cached table (relative error about (Δu)²/8 ≈ 3e-4): for scoring starting
    values only, never for a fit.
    """
    sp_t, spp_t, sums = _grid_table(law, float(a), tuple(int(n) for n in ns))
    k = (u - _TABLE_LO) / _TABLE_STEP
    last = sp_t.shape[1] - 1
    i = np.clip(np.floor(k).astype(int), 0, last - 1)
    f = np.clip(k - i, 0.0, 1.0)
    sp = (1 - f) * sp_t[:, i] + f * sp_t[:, i + 1]
    spp = (1 - f) * spp_t[:, i] + f * spp_t[:, i + 1]
    low = k < 0
    if low.any():
        e = np.exp(u[low])
        sp[:, low] = np.multiply.outer(sums[:, 0], e * e)
        spp[:, low] = np.multiply.outer(sums[:, 1], e)
    high = k > last
    if high.any():
        e = np.exp(-u[high])
        sp[:, high] = sums[:, 2:3] - np.multiply.outer(sums[:, 3], e * e)
        spp[:, high] = np.multiply.outer(sums[:, 4], e)
    return sp, spp


# ------------------------------------------------------------------------------------ the public moduli


def mode_times(tau1: float, n: int, a: float = 2.0, form: str = "sine") -> np.ndarray:
    """Return the N mode relaxation times of a bead-spring chain, longest first.

    sine:  τ_p = τ_1 [sin(π/(2(N+1))) / sin(pπ/(2(N+1)))]^a ;  power:  τ_p = τ_1 p^(−a),  p = 1 … N;
    or any law registered with :func:`register_law`.

    References
    ----------
    Rouse, P. E. (1953), J. Chem. Phys. 21, 1272 (a = 2, sine form); Zimm, B. H. (1956), J. Chem. Phys. 24, 269.
    """
    n = int(n)
    if n < 1:
        raise ValueError("a chain needs at least one mode")
    return get_law(form).times(tau1, n, np.arange(1, n + 1, dtype=float), a)


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
    frame, law, m = Frame(omega), get_law("power"), omega.size
    v_big = _chain_terms(frame, tau1, big, a, law, False)[0][:, 0]  # whole chains: not clipped to N_MAX
    v_n = _chain_terms(frame, tau1, n, a, law, False)[0][:, 0]
    sp_big, spp_big, sp_n, spp_n = v_big[:m], v_big[m:], v_n[:m], v_n[m:]
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
    t = unit_chain(omega, tau1, N, a, get_law(form))
    return G0 * t.storage, G0 * t.loss + eta_s * omega


def rouse_moduli(omega: np.ndarray, G0: float, tau1: float, N: float, *, eta_s: float = 0.0):
    """Return (G', G'') of the exact finite Rouse chain (sine form, a = 2) plus solvent.

    τ_p = τ_1 sin²(π/(2(N+1))) / sin²(pπ/(2(N+1))), each mode G0 (Rouse 1953; Ferry 1980, ch. 9).
    """
    return chain_moduli(omega, G0, tau1, N, a=2.0, form="sine", eta_s=eta_s)


def zimm_moduli(omega: np.ndarray, G0: float, tau1: float, N: float, *, nu: float = 0.5, eta_s: float = 0.0):
    """Return (G', G'') of the Zimm chain τ_p = τ_1 p^(−3ν), p = 1 … N, plus solvent (Zimm 1956)."""
    return chain_moduli(omega, G0, tau1, N, a=3.0 * nu, form="power", eta_s=eta_s)
