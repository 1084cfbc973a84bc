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

import math
from collections.abc import Mapping
from types import MappingProxyType
from typing import Any

import numpy as np

from ..data.record import field, record
from .basis import FLAG_SHARE, LONGEST_SHARE, _as_set, _Set, _share

__all__ = ["Derived", "derive", "side_by_side"]


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


@record
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

    eta0: float
    Je0: float
    tau_n: float
    tau_w: float
    tau_longest: float
    flags: Mapping[str, bool]
    outside_share: Mapping[str, float]
    outside_side: Mapping[str, str] = field(default_factory=dict)
    Je0_polymer: float
    eta_s: float
    G_e: float
    window: tuple[float, float] | None
    basis: str
    notes: tuple[str, ...] = field(default=(), transient=True)

    def __post_init__(self) -> None:
        for name in ("outside_share", "flags", "outside_side"):
            object.__setattr__(self, name, MappingProxyType(dict(getattr(self, name))))

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
