"""Numbers and curves derived from Maxwell modes or from a continuous spectrum.

Both kinds of input are treated as one discrete set (g_j, τ_j): for modes the
fitted strengths; for a continuous spectrum H on a log grid the trapezoid
weights g_j = H_j Δ ln τ_j (the same quadrature the forward model uses).
From that set, with solvent viscosity η_s and equilibrium modulus G_e
(Ferry 1980, ch. 3):

    η0     = η_s + Σ g τ                        (fluids, G_e = 0)
    J_e⁰   = Σ g τ² / η0²                       (fluids; see "solvent" below)
    τ_n    = Σ g τ / Σ g,   τ_w = Σ g τ² / Σ g τ
    G(t)   = G_e + Σ g e^(−t/τ)                 (plus η_s δ(t))
    |η*|   = √(G'² + G''²)/ω,  η(γ̇) ≈ |η*|(ω = γ̇)   (Cox–Merz rule)

J(t) comes from the exact retardation spectrum of the mode set (roots of the
relaxation-function denominator, see :func:`retardation_spectrum`).

Each number carries the share of it that comes from the part of the spectrum
outside the supported window, measured as |Q − Q_in|/|Q| where Q_in is the
same quantity computed with only the in-window part (η_s and G_e kept);
a share above 5 % raises the quantity's flag.

Solvent and J_e⁰: the steady-state compliance is J_e⁰ = ∫ t G(t) dt / η0²
(Ferry 1980, ch. 3); the solvent's δ(t) adds nothing to the first moment
but η_s is part of η0, so J_e⁰ = Σ g τ²/(η_s + Σ g τ)², which is the long-time
intercept of the creep compliance J(t) → J_e⁰ + t/η0 computed here.  For
η_s = 0 it equals Σ g τ²/(Σ g τ)²; the polymer-only value is reported as
``Je0_polymer``.  Ferry (1980, ch. 9) writes the dilute-solution Rouse result
the same way, J_e⁰ = (2/5)(M/cRT)((η0 − η_s)/η0)² (form from memory, checked
numerically in the tests against the J(t) intercept).

References
----------
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, ch. 3 and 9.
Cox, W. P. & Merz, E. H. (1958). J. Polym. Sci. 28, 619 (an empirical rule; common practice).
Tschoegl, N. W. (1989). *The Phenomenological Theory of Linear Viscoelastic Behavior*, Springer
(interconversion of discrete spectra through the zeros of the operator modulus; chapter from memory).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from types import MappingProxyType
from typing import Any

import numpy as np

from ..errors import SettingsError
from ..spectrum.invert import supported_window
from ..spectrum.kernels import modes_moduli, quadrature_weights

__all__ = [
    "FLAG_SHARE",
    "outside_mask",
    "Retardation",
    "retardation_spectrum",
    "Derived",
    "derive",
    "side_by_side",
    "Curve",
    "relaxation_modulus",
    "creep_compliance",
    "complex_viscosity",
    "shear_viscosity",
]

#: A quantity is flagged when more than this share of it comes from outside the supported window.
FLAG_SHARE = 0.05

#: The longest relaxation time is the largest τ whose part at and above it carries this share of Σ g τ.
LONGEST_SHARE = 0.01


# --------------------------------------------------------------------------- a discrete set from either input


def outside_mask(tau: np.ndarray, window: tuple[float, float]) -> np.ndarray:
    """True where ``tau`` lies outside the supported ``window`` (everywhere when the window is empty).

    The complement of ``Spectrum.in_window`` on the same grid.
    """
    tau = np.asarray(tau, dtype=float)
    lo, hi = window
    if not lo < hi:
        return np.ones(tau.shape, dtype=bool)
    return (tau < lo) | (tau > hi)


@dataclasses.dataclass(frozen=True)
class _Set:
    g: np.ndarray
    tau: np.ndarray
    eta_s: float
    G_e: float
    window: tuple[float, float] | None
    kind: str

    @property
    def outside(self) -> np.ndarray:
        if self.window is None:
            return np.zeros(self.tau.shape, dtype=bool)
        return outside_mask(self.tau, self.window)

    def inside_part(self) -> _Set:
        keep = ~self.outside
        return dataclasses.replace(self, g=self.g[keep], tau=self.tau[keep])

    def without(self, side: str) -> _Set:
        """The set without the part beyond the window on one side ("long" or "short" times)."""
        if self.window is None:
            return self
        lo, hi = self.window
        drop = self.tau > max(hi, lo) if side == "long" else self.tau < min(lo, hi)
        return dataclasses.replace(self, g=self.g[~drop], tau=self.tau[~drop])


def _as_set(obj: Any) -> _Set:
    """Turn Modes (``g``, ``tau``) or a Spectrum-like object (``tau``, ``H``) into a discrete set."""
    eta_s = float(getattr(obj, "eta_s", 0.0) or 0.0)
    G_e = float(getattr(obj, "G_e", 0.0) or 0.0)
    if hasattr(obj, "g") and hasattr(obj, "tau"):
        g = np.asarray(obj.g, dtype=float)
        tau = np.asarray(obj.tau, dtype=float)
        kind = "modes"
    elif hasattr(obj, "H") and hasattr(obj, "tau"):
        tau = np.asarray(obj.tau, dtype=float)
        g = np.asarray(obj.H, dtype=float)
        kind = "spectrum"
    else:
        raise SettingsError("expected Maxwell modes (g, tau) or a spectrum (tau, H)")
    if g.shape != tau.shape or g.ndim != 1:
        raise SettingsError(f"{kind}: strengths and relaxation times differ in shape")
    if not (np.all(np.isfinite(g)) and np.all(np.isfinite(tau)) and np.all(tau > 0)):
        raise SettingsError(f"{kind}: relaxation times must be positive and all values finite")
    if kind == "spectrum":
        if tau.size > 1 and np.any(np.diff(tau) <= 0):
            raise SettingsError("spectrum: the tau grid must be strictly increasing")
        g = g * quadrature_weights(tau)
    if np.any(g < 0) or eta_s < 0 or G_e < 0:
        raise SettingsError(f"{kind}: strengths, eta_s and G_e must be nonnegative")
    keep = g > 0
    window = getattr(obj, "window", None)
    if window is None and getattr(obj, "omega", None) is not None:
        window = supported_window(np.asarray(obj.omega, dtype=float))
    if window is not None:
        window = (float(window[0]), float(window[1]))
    order = np.argsort(tau[keep])
    return _Set(g[keep][order], tau[keep][order], eta_s, G_e, window, kind)


def _share(full: Any, inside: Any) -> Any:
    """|Q − Q_in|/|Q|, 1 where the in-window value does not exist, 0 where Q is 0 and unchanged."""
    full = np.asarray(full, dtype=float)
    inside = np.asarray(inside, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        s = np.abs(full - inside) / np.abs(full)
    s = np.where(np.isfinite(full) & ~np.isfinite(inside), 1.0, s)
    s = np.where((full == inside) | (~np.isfinite(full) & ~np.isfinite(inside)), 0.0, s)
    s = np.where(np.isnan(s), 1.0, s)
    return float(s) if s.ndim == 0 else s


# --------------------------------------------------------------------------- retardation spectrum


@dataclasses.dataclass(frozen=True, kw_only=True, eq=False)
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

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form."""
        return {"J_g": self.J_g, "lam": self.lam.tolist(), "J": self.J.tolist(), "eta0": self.eta0}


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
        raise SettingsError("the mode set is empty: no modes, no solvent viscosity, no plateau")

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


# --------------------------------------------------------------------------- scalar quantities


def _scalars(s: _Set) -> dict[str, float]:
    g, tau = s.g, s.tau
    m0 = float(np.sum(g))
    m1 = float(np.sum(g * tau))
    m2 = float(np.sum(g * tau * tau))
    nan = math.nan
    fluid = s.G_e == 0
    eta0 = s.eta_s + m1 if fluid else math.inf
    out = {
        "eta0": eta0,
        "Je0": m2 / eta0 ** 2 if fluid and eta0 > 0 else nan,
        "Je0_polymer": m2 / m1 ** 2 if fluid and m1 > 0 else nan,
        "tau_n": m1 / m0 if m0 > 0 else nan,
        "tau_w": m2 / m1 if m1 > 0 else nan,
        "tau_longest": nan,
    }
    if m1 > 0:
        from_top = np.cumsum((g * tau)[::-1])[::-1]  # Σ_{τ_j ≥ τ_i} g_j τ_j
        ok = np.flatnonzero(from_top >= LONGEST_SHARE * m1)
        out["tau_longest"] = float(tau[ok[-1]])
    return out


_SCALAR_WORDS = {
    "eta0": ("zero-shear viscosity eta0", "Pa s"),
    "Je0": ("steady-state compliance Je0", "1/Pa"),
    "Je0_polymer": ("polymer part sum(g tau^2)/sum(g tau)^2", "1/Pa"),
    "tau_n": ("number-average relaxation time tau_n", "s"),
    "tau_w": ("weight-average relaxation time tau_w", "s"),
    "tau_longest": ("longest relaxation time", "s"),
}


@dataclasses.dataclass(frozen=True, kw_only=True, eq=False)
class Derived:
    """The derived numbers of one mode set or spectrum, with their out-of-window shares and flags.

    Attributes
    ----------
    basis : str
        ``"modes"`` or ``"spectrum"``.
    eta0, Je0, Je0_polymer, tau_n, tau_w, tau_longest : float
        See the module docstring; NaN where undefined (η0 = inf, J_e⁰ = NaN for a solid).
    eta_s, G_e : float
        Carried from the input.
    window : (float, float) or None
        The supported window used for the flags.
    outside_share : mapping
        |Q − Q_in|/|Q| for each quantity.
    flags : mapping
        True where the share exceeds :data:`FLAG_SHARE`.
    outside_side : mapping
        For each quantity, which side of the window contributes more: ``"long"`` or ``"short"`` times.
    """

    basis: str
    eta0: float
    Je0: float
    Je0_polymer: float
    tau_n: float
    tau_w: float
    tau_longest: float
    eta_s: float
    G_e: float
    window: tuple[float, float] | None
    outside_share: Mapping[str, float]
    flags: Mapping[str, bool]
    outside_side: Mapping[str, str] = dataclasses.field(default_factory=dict)
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        for name in ("outside_share", "flags", "outside_side"):
            object.__setattr__(self, name, MappingProxyType(dict(getattr(self, name))))

    def to_dict(self) -> dict[str, Any]:
        """Return the ``derived`` object of the JSON output."""
        return {
            "eta0": self.eta0,
            "Je0": self.Je0,
            "tau_n": self.tau_n,
            "tau_w": self.tau_w,
            "tau_longest": self.tau_longest,
            "flags": dict(self.flags),
            "outside_share": dict(self.outside_share),
            "outside_side": dict(self.outside_side),
            "Je0_polymer": self.Je0_polymer,
            "eta_s": self.eta_s,
            "G_e": self.G_e,
            "window": None if self.window is None else list(self.window),
            "basis": self.basis,
        }

    def report(self) -> str:
        """Return the numbers in words, saying which lean on the spectrum outside the window."""
        return side_by_side(self)


def derive(obj: Any) -> Derived:
    """Return the derived numbers of Maxwell modes or of a continuous spectrum (duck typed).

    Parameters
    ----------
    obj : Modes or Spectrum-like
        Anything with ``g`` and ``tau`` (modes) or ``tau`` and ``H`` (a
        spectrum on a log grid), and optionally ``eta_s``, ``G_e``, ``window``
        (or ``omega`` to compute it).

    Returns
    -------
    Derived

    References
    ----------
    Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., ch. 3.
    Davies, A. R. & Anderssen, R. S. (1997). J. Non-Newtonian Fluid Mech. 73, 163.
    """
    s = _as_set(obj)
    full = _scalars(s)
    inside = _scalars(s.inside_part())
    share = {k: _share(full[k], inside[k]) for k in full}
    no_long, no_short = _scalars(s.without("long")), _scalars(s.without("short"))
    side = {k: "long" if _share(full[k], no_long[k]) >= _share(full[k], no_short[k]) else "short" for k in full}
    notes: list[str] = []
    if s.window is None:
        notes.append("no supported window known (no frequencies given); nothing is flagged")
        share = {k: 0.0 for k in full}
    if s.G_e > 0:
        notes.append("an equilibrium modulus G_e > 0 makes this a solid: eta0 is infinite and Je0 undefined")
    flags = {k: bool(v > FLAG_SHARE) for k, v in share.items()}
    return Derived(basis=s.kind, eta_s=s.eta_s, G_e=s.G_e, window=s.window, outside_share=share, flags=flags,
                   outside_side=side, notes=tuple(notes), **full)


def side_by_side(*results: Derived) -> str:
    """Return a text table of one or more :class:`Derived` results in columns, with the flags in words."""
    if not results:
        return ""
    head = f"{'quantity':<44}" + "".join(f"{'from ' + r.basis:>16}" for r in results)
    lines = [head]
    for key, (words, unit) in _SCALAR_WORDS.items():
        cells = []
        for r in results:
            v = getattr(r, key)
            mark = "*" if r.flags.get(key) else " "
            cells.append(f"{v:15.5g}{mark}")
        lines.append(f"{words + ' [' + unit + ']':<44}" + "".join(cells))
    lines.append("* more than 5 % of the value comes from relaxation times outside the supported window")
    for r in results:
        if r.window is not None:
            lo, hi = r.window
            lines.append(f"from {r.basis}: supported window {lo:.4g} s to {hi:.4g} s (Davies & Anderssen 1997)")
        for key, (words, _) in _SCALAR_WORDS.items():
            if r.flags.get(key) and key != "Je0_polymer":
                where = ("relaxation times longer than the supported window (the data have no terminal zone)"
                         if r.outside_side.get(key, "long") == "long" else
                         "relaxation times shorter than the supported window (faster than the highest frequency)")
                pct = 100 * r.outside_share[key]
                how = f"{pct:.0f} % of it comes from {where}" if pct <= 100 else \
                    f"it changes by {pct:.0f} % without the {where}"
                lines.append(f"from {r.basis}: {words}: {how}; the data do not determine it")
        lines.extend(f"from {r.basis}: {n}" for n in r.notes)
    return "\n".join(lines)


# --------------------------------------------------------------------------- curves


@dataclasses.dataclass(frozen=True, kw_only=True, eq=False)
class Curve:
    """A predicted material function on a set of abscissae, with per-point out-of-window shares."""

    quantity: str
    x: np.ndarray
    y: np.ndarray
    x_name: str
    x_unit: str
    y_name: str
    y_unit: str
    outside_share: np.ndarray
    basis: str
    method: str
    window: tuple[float, float] | None

    def __post_init__(self) -> None:
        for name in ("x", "y", "outside_share"):
            arr = np.array(getattr(self, name), dtype=float, copy=True)
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    @property
    def flags(self) -> np.ndarray:
        """True where more than 5 % of the value comes from outside the supported window."""
        return self.outside_share > FLAG_SHARE

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form."""
        return {
            "quantity": self.quantity,
            "x_name": self.x_name,
            "x_unit": self.x_unit,
            "y_name": self.y_name,
            "y_unit": self.y_unit,
            "x": self.x.tolist(),
            "y": self.y.tolist(),
            "outside_share": self.outside_share.tolist(),
            "flags": self.flags.tolist(),
            "basis": self.basis,
            "method": self.method,
            "window": None if self.window is None else list(self.window),
        }

    def report(self) -> str:
        """Return a short description in words, including where the curve leans on the unsupported spectrum."""
        n = int(self.flags.sum())
        lines = [f"{self.y_name} from {self.basis}: {self.x.size} points, {self.x_name} "
                 f"{self.x.min():.4g} to {self.x.max():.4g} {self.x_unit}; {self.method}"]
        if n:
            xs = self.x[self.flags]
            lines.append(f"{n} of {self.x.size} points ({self.x_name} {xs.min():.4g} to {xs.max():.4g} "
                         f"{self.x_unit}) take more than 5 % of their value from relaxation times outside the "
                         f"supported window; there the curve is an extrapolation")
        else:
            lines.append("every point takes at least 95 % of its value from the supported window")
        return "\n".join(lines)


def _positive(values: Any, what: str) -> np.ndarray:
    arr = np.atleast_1d(np.asarray(values, dtype=float))
    if arr.ndim != 1 or arr.size == 0 or not np.all(np.isfinite(arr)) or np.any(arr <= 0):
        raise SettingsError(f"{what} must be positive finite numbers")
    return arr


def _G_of_t(s: _Set, t: np.ndarray) -> np.ndarray:
    return s.G_e + np.exp(-np.outer(t, 1.0 / s.tau)) @ s.g if s.tau.size else np.full(t.shape, s.G_e)


def _J_of_t(s: _Set, t: np.ndarray) -> np.ndarray:
    try:
        return retardation_spectrum(s.g, s.tau, eta_s=s.eta_s, G_e=s.G_e).compliance(t)
    except SettingsError:
        return np.full(t.shape, np.nan)


def _eta_star(s: _Set, w: np.ndarray) -> np.ndarray:
    gp, gpp = modes_moduli(w, s.g, s.tau, eta_s=s.eta_s, G_e=s.G_e)
    return np.hypot(gp, gpp) / w


def _curve(obj: Any, x: Any, what: str, fn: Any, **labels: str) -> Curve:
    s = _as_set(obj)
    xs = _positive(x, what)
    y = fn(s, xs)
    share = _share(y, fn(s.inside_part(), xs)) if s.window is not None else np.zeros_like(y)
    return Curve(x=xs, y=y, outside_share=np.atleast_1d(share), basis=s.kind, window=s.window, **labels)


def relaxation_modulus(obj: Any, t: Any) -> Curve:
    """Return the relaxation modulus G(t) = G_e + Σ g e^(−t/τ) in Pa (Ferry 1980, ch. 3).

    A solvent viscosity adds η_s δ(t), which is zero at every t > 0 and is not shown.
    """
    return _curve(obj, t, "times", _G_of_t, quantity="relaxation", x_name="t", x_unit="s", y_name="G(t)",
                  y_unit="Pa", method="G(t) = G_e + sum g exp(-t/tau) (Ferry 1980, ch. 3)")


def creep_compliance(obj: Any, t: Any) -> Curve:
    """Return the creep compliance J(t) in 1/Pa from the exact retardation spectrum of the set.

    See :func:`retardation_spectrum`; for a spectrum the grid (trapezoid
    weights) is treated as a discrete mode set.
    """
    return _curve(obj, t, "times", _J_of_t, quantity="creep", x_name="t", x_unit="s", y_name="J(t)",
                  y_unit="1/Pa", method="exact interconversion via the retardation spectrum: zeros of the "
                  "operator modulus Q(s) = s G(s) (Tschoegl 1989)")


def complex_viscosity(obj: Any, omega: Any) -> Curve:
    """Return |η*|(ω) = √(G'² + G''²)/ω in Pa·s (Ferry 1980, ch. 1)."""
    return _curve(obj, omega, "angular frequencies", _eta_star, quantity="complex_viscosity", x_name="omega",
                  x_unit="rad/s", y_name="|eta*|", y_unit="Pa s", method="|eta*| = |G*|/omega")


def shear_viscosity(obj: Any, rates: Any) -> Curve:
    """Return the steady-shear viscosity estimate η(γ̇) ≈ |η*|(ω = γ̇) by the Cox–Merz rule.

    The Cox–Merz rule is empirical (Cox & Merz 1958, J. Polym. Sci. 28, 619): common practice, no
    theory behind it; it fails for many structured fluids and gels.
    """
    return _curve(obj, rates, "shear rates", _eta_star, quantity="viscosity", x_name="shear_rate", x_unit="1/s",
                  y_name="eta_cox_merz", y_unit="Pa s",
                  method="Cox-Merz rule eta(rate) = |eta*|(omega = rate), empirical (Cox & Merz 1958), "
                  "common practice")
