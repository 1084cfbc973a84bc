"""The result of a bead-spring chain fit: the parameters, their intervals and the fit statistics."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..data.record import field, record
from .bounds import checked_interval
from .chains import A_BOUNDS, N_MAX, mode_times

__all__ = ["BeadSpringFit"]


@record
class BeadSpringFit:
    """A bead-spring model fitted to one sweep.

    ``chi2`` is the sum of squared relative residuals over G' and G''; ``reduced_chi2 = chi2/(n − k)``;
    ``aic = n ln(chi2/n) + 2k`` and ``bic = n ln(chi2/n) + k ln n`` (Gaussian errors of unknown common
    relative size; Burnham & Anderson 2002, ch. 2).  Intervals are 95 %; ``ci_method`` says how they were
    found ("profile likelihood", "jacobian", or "none").
    """

    model: str
    form: str
    G0: float
    G0_ci: tuple[float, float] = (math.nan, math.nan)
    tau1: float
    tau1_ci: tuple[float, float] = (math.nan, math.nan)
    N: float
    eta_s: float
    a: float
    a_free: bool
    a_ci: tuple[float, float] = (math.nan, math.nan)
    ci_method: str = "none"
    chi2: float
    n_data: int
    n_params: int
    reduced_chi2: float
    aic: float
    bic: float
    rms: float
    notes: tuple[str, ...] = ()
    storage_fit: np.ndarray = field(transient=True, default=None)
    loss_fit: np.ndarray = field(transient=True, default=None)

    def _json_out(self, d: dict[str, Any]) -> dict[str, Any]:
        # no zero-width interval is written (issue 16): a fixed exponent has none, a degenerate one is withheld,
        # and a parameter at a search bound is listed in ``at_bound`` with its interval withheld
        bounds = self.at_bound()
        for key, value in (("G0", self.G0), ("tau1", self.tau1), ("a", self.a)):
            d[f"{key}_ci"] = list(checked_interval(key, value, d[f"{key}_ci"], bounds.get(key, ""))[0])
        if not self.a_free:  # a held at its model value
            d["a_ci"] = [math.nan, math.nan]
        d["at_bound"] = sorted(bounds)
        return d

    def at_bound(self, omega: np.ndarray | None = None) -> dict[str, str]:
        """Parameters at a search bound, each with its bound.

        N at 1 or N_MAX, a at A_BOUNDS, τ_1 at the limits 10⁻³/ω_max and 10³/ω_min of the fit (when ``omega``
        is given).
        """
        out = {}
        if self.N >= N_MAX * (1 - 1e-6):
            out["N"] = f"N_MAX = {N_MAX:g}"
        elif self.N <= 1 + 1e-6:
            out["N"] = "N = 1"
        if self.a_free and min(self.a - A_BOUNDS[0], A_BOUNDS[1] - self.a) < 1e-6:
            out["a"] = f"a in [{A_BOUNDS[0]:g}, {A_BOUNDS[1]:g}]"
        if omega is not None:
            lo, hi = 1e-3 / float(np.max(omega)), 1e3 / float(np.min(omega))
            if abs(math.log(self.tau1 / lo)) < 1e-6 or abs(math.log(self.tau1 / hi)) < 1e-6:
                out["tau1"] = f"tau_1 in [{lo:.3g}, {hi:.3g}] s"
        return out

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        if not d.get("a_free", True):
            d.pop("a_ci", None)
        return d

    def mode_times(self) -> np.ndarray:
        """Return the mode times of the fitted chain (N rounded to the nearest integer)."""
        return mode_times(self.tau1, max(1, round(self.N)), self.a, self.form)
