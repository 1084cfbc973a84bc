"""Scaling along a series of samples: power laws τ ∝ M^x and G ∝ c^y M^z."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
from scipy import stats

from ...data.record import record
from ...spectrum.kernels import quadrature_weights
from ...spectrum.result import Spectrum
from .shape import CI_LEVEL

__all__ = [
    "PowerLaw", "characteristic_time", "characteristic_modulus", "fit_power_law", "TIME_EXPECTED",
    "MODULUS_EXPECTED", "series_scaling"
]


@record
class PowerLaw:
    """A power law fitted in logs, ln y = ln k + Σ e_j ln x_j, by ordinary least squares.

    ``exponents`` maps a variable name (``"M"``, ``"c"``) to its exponent, ``intervals`` to its 95 %
    interval (Student t with n − p degrees of freedom; NaN when n = p).
    """

    response: str
    measure: str
    exponents: Mapping[str, float]
    intervals: Mapping[str, tuple[float, float]]
    prefactor: float
    n: int
    residual_rms: float
    expected: Mapping[str, str]

    def report(self) -> str:
        """Return one line per exponent."""
        out = []
        for k, v in self.exponents.items():
            lo, hi = self.intervals[k]
            out.append(f"  {self.response} ∝ {k}^{v:.3f}  95% [{lo:.3f}, {hi:.3f}]  ({self.measure}; n = {self.n})")
        out += [f"    expected: {e}" for e in self.expected.values()]
        return "\n".join(out)


# ----------------------------------------------------------------------------------------- series
def characteristic_time(spectrum: Spectrum) -> float:
    """The weight-average relaxation time over the window, τ_w = ∫ H τ² d ln τ / ∫ H τ d ln τ.

    For a spectrum wholly inside the window τ_w = η0 J_e⁰ (Ferry 1980, ch. 3); for Rouse chains with many
    modes τ_w = τ_R Σ p⁻⁴ / Σ p⁻² → (π²/15) τ_R (Ferry 1980, ch. 9).
    """
    m = spectrum.in_window
    tau, H = np.asarray(spectrum.tau)[m], np.asarray(spectrum.H)[m]
    w = quadrature_weights(tau)
    num, den = float(np.sum(w * H * tau**2)), float(np.sum(w * H * tau))
    return num / den if den > 0 else math.nan


def characteristic_modulus(spectrum: Spectrum) -> float:
    """The modulus G_w = (∫ H τ d ln τ)² / ∫ H τ² d ln τ = η0/τ_w over the window (= 1/J_e⁰ when complete).

    For Rouse chains J_e⁰ = 2M/(5cRT), so G_w = 2.5 cRT/M = 2.5 G0 (Ferry 1980, ch. 9; from memory).
    """
    m = spectrum.in_window
    tau, H = np.asarray(spectrum.tau)[m], np.asarray(spectrum.H)[m]
    w = quadrature_weights(tau)
    num, den = float(np.sum(w * H * tau)), float(np.sum(w * H * tau**2))
    return num * num / den if den > 0 else math.nan


def fit_power_law(y: Sequence[float], variables: Mapping[str, Sequence[float]], *, response: str, measure: str,
                  expected: Mapping[str, str] | None = None) -> PowerLaw | None:
    """Fit ln y = ln k + Σ e_j ln x_j by least squares; variables that do not vary are left out.

    Intervals: e_j ± t_{0.975, n−p} s √((XᵀX)⁻¹_jj), s² = RSS/(n − p) (ordinary least squares; Draper &
    Smith 1998, *Applied Regression Analysis*, 3rd ed., ch. 1–5).  Returns None when nothing varies or there
    are fewer points than parameters.
    """
    yv = np.asarray(y, dtype=float)
    names = [k for k, v in variables.items()
             if np.ptp(np.log(np.asarray(v, dtype=float))) > 1e-6]
    if not names or len(yv) < len(names) + 1:
        return None
    X = np.column_stack([np.ones(len(yv))] + [np.log(np.asarray(variables[k], dtype=float)) for k in names])
    ly = np.log(yv)
    coef, *_ = np.linalg.lstsq(X, ly, rcond=None)
    resid = ly - X @ coef
    n, p = X.shape
    dof = n - p
    if dof > 0:
        s2 = float(resid @ resid) / dof
        se = np.sqrt(np.diag(np.linalg.inv(X.T @ X)) * s2)
        t = float(stats.t.ppf(0.5 + CI_LEVEL / 2, dof))
        cis = {k: (float(coef[j + 1] - t * se[j + 1]), float(coef[j + 1] + t * se[j + 1])) for j, k in enumerate(names)}
    else:
        cis = {k: (math.nan, math.nan) for k in names}
    return PowerLaw(response=response, measure=measure, exponents={k: float(coef[j + 1]) for j, k in enumerate(names)},
                    intervals=cis, prefactor=float(math.exp(coef[0])), n=n,
                    residual_rms=float(np.sqrt(np.mean(resid**2))), expected=dict(expected or {}))


TIME_EXPECTED = {
    "rouse": "Rouse chains: x = 2 (Ferry 1980, ch. 9)",
    "entangled": "entangled melts: longest time ∝ M^3.4 (common practice, empirical)",
}
MODULUS_EXPECTED = {
    "rouse": "Rouse chains: G0 = cRT/M, so y = 1, z = −1 (Ferry 1980, ch. 9)",
}


def _series_fits(times: Sequence[float], mods: Sequence[float], M: Sequence[float | None],
                 c: Sequence[float | None], use: Sequence[int], t_measure: str, g_measure: str,
                 suffix: str = "") -> dict[str, PowerLaw]:
    out: dict[str, PowerLaw] = {}
    idx = [i for i in use if M[i] is not None and M[i] > 0]
    fit = fit_power_law([times[i] for i in idx], {"M": [M[i] for i in idx]}, response="tau", measure=t_measure,
                        expected=TIME_EXPECTED) if len(idx) >= 2 else None
    if fit is not None:
        out["time" + suffix] = fit
    jdx = [i for i in use if (M[i] is not None or c[i] is not None)
           and (M[i] is None or M[i] > 0) and (c[i] is None or c[i] > 0)]
    variables: dict[str, list[float]] = {}
    for key, values in (("c", c), ("M", M)):
        if jdx and all(values[i] is not None for i in jdx):
            variables[key] = [float(values[i]) for i in jdx]
    fit = fit_power_law([mods[i] for i in jdx], variables, response="G", measure=g_measure,
                        expected=MODULUS_EXPECTED) if variables else None
    if fit is not None:
        out["modulus" + suffix] = fit
    return out


def series_scaling(spectra: Sequence[Spectrum], M: Sequence[float | None], c: Sequence[float | None], *,
                   diagnoses: Sequence[Any] | None = None) -> dict[str, PowerLaw]:
    """Fit τ ∝ M^x and G ∝ c^y M^z over the samples whose M (and c) are known.

    ``time`` and ``modulus`` use τ_R and G0 of the Rouse diagnosis when every sample is diagnosed ``rouse``;
    otherwise the weight-average time τ_w of each spectrum (:func:`characteristic_time`) and G_w = η0/τ_w
    (:func:`characteristic_modulus`), and then, when at least two samples are diagnosed ``rouse``, also
    ``time_rouse`` and ``modulus_rouse`` over those.  The ``measure`` field of each fit says which.
    """
    n = len(spectra)
    rouse = [i for i in range(n) if diagnoses is not None and diagnoses[i] is not None
             and getattr(diagnoses[i], "verdict", None) == "rouse"]
    if rouse:
        r_times = [float(diagnoses[i].tau_R) if i in rouse else math.nan for i in range(n)]
        r_mods = [float(diagnoses[i].G0) if i in rouse else math.nan for i in range(n)]
        r_measures = ("tau_R of the Rouse diagnosis", "G0 of the Rouse diagnosis")
    if len(rouse) == n:
        return _series_fits(r_times, r_mods, M, c, range(n), *r_measures)
    out = _series_fits([characteristic_time(s) for s in spectra], [characteristic_modulus(s) for s in spectra],
                       M, c, range(n), "weight-average time tau_w = sum H tau^2 / sum H tau over the window",
                       "modulus G_w = (sum H tau)^2 / sum H tau^2 over the window (1/J_e; 2.5 G0 for Rouse chains)")
    if len(rouse) >= 2:
        out.update(_series_fits(r_times, r_mods, M, c, rouse, *r_measures, suffix="_rouse"))
    return out
