"""Curves predicted from a spectrum or modes: G(t), J(t), |η*|(ω) and the steady-shear viscosity (Cox–Merz)."""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np

from ..data.record import insert_after, record
from ..errors import SettingsError
from ..spectrum.kernels import modes_moduli
from .basis import FLAG_SHARE, _as_set, _Set, _share
from .retardation import retardation_spectrum

__all__ = ["Curve", "relaxation_modulus", "creep_compliance", "complex_viscosity", "shear_viscosity"]


# --------------------------------------------------------------------------- curves

#: Curves in the frequency domain: inside the measured range they re-express the fitted moduli.
_FREQUENCY_DOMAIN = ("complex_viscosity", "viscosity")


@record
class Curve:
    """A predicted material function on a set of abscissae, with per-point out-of-window shares.

    ``measured`` is the range of the abscissa the sweep covers (ω_min to ω_max for a frequency or shear rate,
    1/ω_max to 1/ω_min for a time); a point beyond it is an extrapolation whatever the modes, since the data
    say nothing about relaxation much slower (or faster) than they reach.
    """

    quantity: str
    x_name: str
    x_unit: str
    y_name: str
    y_unit: str
    x: np.ndarray
    y: np.ndarray
    outside_share: np.ndarray
    basis: str
    method: str
    window: tuple[float, float] | None
    measured: tuple[float, float] | None = None

    def __post_init__(self) -> None:
        for name in ("x", "y", "outside_share"):
            arr = np.array(getattr(self, name), dtype=float, copy=True)
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    @property
    def beyond(self) -> np.ndarray:
        """True where the abscissa lies beyond the range the sweep covers (``measured``), by more than 1e-9."""
        if self.measured is None:
            return np.zeros(self.x.shape, dtype=bool)
        lo, hi = self.measured
        return (self.x < lo * (1 - 1e-9)) | (self.x > hi * (1 + 1e-9))

    @property
    def measured_moduli(self) -> np.ndarray:
        """True where the point only re-expresses the fitted moduli: a frequency or shear rate inside ``measured``.

        There |η*| = |G*|/ω is fixed by the data (to the fit's residual) whichever modes carry it, so the share
        of modes outside the supported window does not make it an extrapolation; in time (G(t), J(t)) it does.
        """
        if self.quantity not in _FREQUENCY_DOMAIN or self.measured is None:
            return np.zeros(self.x.shape, dtype=bool)
        return ~self.beyond

    @property
    def leaning(self) -> np.ndarray:
        """True where over 5 % of the value comes from outside the supported window and the data do not fix it."""
        return (self.outside_share > FLAG_SHARE) & ~self.measured_moduli

    @property
    def flags(self) -> np.ndarray:
        """True where the curve is an extrapolation: beyond the measured range, or :attr:`leaning`."""
        return self.leaning | self.beyond

    def _json_out(self, d: dict[str, Any]) -> dict[str, Any]:
        d = insert_after(d, "outside_share", "beyond_measured", self.beyond.tolist())
        return insert_after(d, "beyond_measured", "flags", self.flags.tolist())

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        d.pop("flags", None)
        d.pop("beyond_measured", None)
        return d

    def caveats(self, number: Callable[[float], str] = "{:.4g}".format) -> list[str]:
        """The points where the curve is an extrapolation, in words (empty when there are none).

        ``number`` formats the values.
        """
        out = []
        far = self.beyond
        if far.any():
            xs = self.x[far]
            lo, hi = self.measured or (math.nan, math.nan)
            out.append(f"{far.sum()} of {self.x.size} points ({self.x_name} {number(xs.min())}–{number(xs.max())} "
                       f"{self.x_unit}) lie beyond the measured range {number(lo)}–{number(hi)} {self.x_unit}: "
                       "there the curve is an extrapolation")
        leaning = self.leaning & ~far
        if leaning.any():
            xs = self.x[leaning]
            out.append(f"{leaning.sum()} of {self.x.size} points ({self.x_name} {number(xs.min())}–"
                       f"{number(xs.max())} {self.x_unit}) take more than 5 % of their value from relaxation times "
                       "outside the supported window: there the curve is an extrapolation")
        return out

    def report(self) -> str:
        """Return a short description in words, including where the curve is an extrapolation."""
        lines = [f"{self.y_name} from {self.basis}: {self.x.size} points, {self.x_name} "
                 f"{self.x.min():.4g} to {self.x.max():.4g} {self.x_unit}; {self.method}"]
        fixed = ("is fixed by the measured moduli" if self.measured_moduli.any() else
                 "takes at least 95 % of its value from the supported window")
        lines += self.caveats() or [f"every point lies in the measured range and {fixed}"]
        return "\n".join(lines)


def _positive(values: Any, what: str) -> np.ndarray:
    arr = np.atleast_1d(np.asarray(values, dtype=float))
    if arr.ndim != 1 or arr.size == 0 or not np.all(np.isfinite(arr)) or np.any(arr <= 0):
        raise SettingsError(f"{what} must be positive finite numbers")
    return arr


def _G_of_t(s: _Set, t: np.ndarray) -> np.ndarray:
    return s.G_e + np.exp(-np.outer(t, 1.0 / s.tau)) @ s.g if s.tau.size else np.full(t.shape, s.G_e)


def _J_of_t(s: _Set, t: np.ndarray) -> np.ndarray:
    return retardation_spectrum(s.g, s.tau, eta_s=s.eta_s, G_e=s.G_e).compliance(t)


def _eta_star(s: _Set, w: np.ndarray) -> np.ndarray:
    gp, gpp = modes_moduli(w, s.g, s.tau, eta_s=s.eta_s, G_e=s.G_e)
    return np.hypot(gp, gpp) / w


def _curve(obj: Any, x: Any, what: str, fn: Any, **labels: str) -> Curve:
    s = _as_set(obj)
    xs = _positive(x, what)
    y = fn(s, xs)  # a set the quantity cannot be computed from is the caller's error (SettingsError)
    share = _share(y, _inside(fn, s, xs)) if s.window is not None else np.zeros_like(y)
    measured = s.measured
    if measured is not None and labels["x_unit"] == "s":  # a time: the reciprocal frequencies
        measured = (1.0 / measured[1], 1.0 / measured[0])
    return Curve(x=xs, y=y, outside_share=np.atleast_1d(share), basis=s.kind, window=s.window, measured=measured,
                 **labels)


def _inside(fn: Any, s: _Set, xs: np.ndarray) -> np.ndarray:
    """The quantity from the part of the set inside the supported window; NaN where that part has none."""
    try:
        return fn(s.inside_part(), xs)
    except SettingsError:  # nothing inside the window (an empty set): every point comes from outside it
        return np.full(xs.shape, np.nan)


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
