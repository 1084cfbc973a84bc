"""Scaling along a series of samples: power laws τ ∝ M^x and G ∝ c^y M^z."""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
from scipy import stats

from ...data.record import record
from ...modes.basis import FLAG_SHARE
from ...spectrum.kernels import quadrature_weights
from ...spectrum.result import Spectrum
from .shape import CI_LEVEL

__all__ = [
    "PowerLaw", "characteristic_time", "characteristic_modulus", "window_cut", "fit_power_law", "TIME_EXPECTED",
    "MODULUS_EXPECTED", "series_scaling"
]


@record
class PowerLaw:
    """A power law fitted in logs, ln y = ln k + Σ e_j ln x_j, by ordinary least squares.

    ``exponents`` maps a variable name (``"M"``, ``"c"``) to its exponent, ``intervals`` to its 95 %
    interval (Student t with n − p degrees of freedom; NaN when n = p).  ``caveat`` is "" or says why the
    interval cannot test the ``expected`` values (the spectra's moments reach past the supported window).
    """

    response: str
    measure: str
    exponents: Mapping[str, float]
    intervals: Mapping[str, tuple[float, float]]
    prefactor: float
    n: int
    residual_rms: float
    expected: Mapping[str, str]
    caveat: str = ""

    def report(self) -> str:
        """Return one line per exponent."""
        out = []
        for k, v in self.exponents.items():
            lo, hi = self.intervals[k]
            out.append(f"  {self.response} ∝ {k}^{v:.3f}  95% [{lo:.3f}, {hi:.3f}]  ({self.measure}; n = {self.n})")
        if self.caveat:
            out.append(f"    caveat: {self.caveat}")
        out += [f"    expected: {e}" for e in self.expected.values()]
        return "\n".join(out)


# ----------------------------------------------------------------------------------------- series
def _window_part(spectrum: Spectrum) -> tuple[np.ndarray, np.ndarray]:
    """τ and H inside the supported window."""
    m = np.asarray(spectrum.in_window)
    return np.asarray(spectrum.tau)[m], np.asarray(spectrum.H)[m]


def characteristic_time(spectrum: Spectrum) -> float:
    """The weight-average relaxation time over the window, τ_w = ∫ H τ² d ln τ / ∫ H τ d ln τ.

    For a spectrum wholly inside the window τ_w = η0 J_e⁰ (Ferry 1980, ch. 3); for Rouse chains with many
    modes τ_w = τ_R Σ p⁻⁴ / Σ p⁻² → (π²/15) τ_R (Ferry 1980, ch. 9).
    """
    tau, H = _window_part(spectrum)
    w = quadrature_weights(tau)
    num, den = float(np.sum(w * H * tau**2)), float(np.sum(w * H * tau))
    return num / den if den > 0 else math.nan


def characteristic_modulus(spectrum: Spectrum) -> float:
    """The modulus G_w = (∫ H τ d ln τ)² / ∫ H τ² d ln τ = η0/τ_w over the window (= 1/J_e⁰ when complete).

    For Rouse chains J_e⁰ = 2M/(5cRT), so G_w = 2.5 cRT/M = 2.5 G0 (Ferry 1980, ch. 9; from memory).
    """
    tau, H = _window_part(spectrum)
    w = quadrature_weights(tau)
    num, den = float(np.sum(w * H * tau)), float(np.sum(w * H * tau**2))
    return num * num / den if den > 0 else math.nan


#: Width (decades) of the window's end zones in which :func:`window_cut` looks for a spectrum that goes on.
END_DECADES = 0.5


def window_cut(spectrum: Spectrum) -> tuple[float, float]:
    """How far the spectrum reaches past the supported window: the shares (short end, long end), 0 when it ends inside.

    Short end: the share of ∫ H τ d ln τ in the window's shortest :data:`END_DECADES`.  Where the spectrum goes
    on as the Rouse law H ∝ τ^(−1/2) (fast modes beyond ω_max) the part cut off is 2 H τ at the end, and this
    share is 0.78 of it, so it measures what τ_w and G_w miss.  Long end: the share of ∫ H τ² d ln τ in the
    longest :data:`END_DECADES`, counted only where H τ² at the window's end is still at least half its largest
    value in that zone; a spectrum that ends in a peak just inside the window (its longest mode) is not cut.
    Our choice of measure (common practice to look at the ends, no source for these rules).
    """
    tau, H = _window_part(spectrum)
    if tau.size < 3:
        return math.nan, math.nan
    w = quadrature_weights(tau)
    x = np.log10(tau)
    f1, f2 = w * H * tau, w * H * tau**2
    short = x <= x[0] + END_DECADES
    long = x >= x[-1] - END_DECADES
    t1, t2 = float(f1.sum()), float(f2.sum())
    s_short = float(f1[short].sum()) / t1 if t1 > 0 else math.nan
    g2 = H[long] * tau[long] ** 2
    going_on = g2.size > 0 and float(g2[-1]) >= 0.5 * float(g2.max()) > 0
    s_long = float(f2[long].sum()) / t2 if t2 > 0 and going_on else 0.0
    return s_short, s_long


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


def _window_caveats(fits: dict[str, PowerLaw], spectra: Sequence[Spectrum],
                    labels: Sequence[str]) -> dict[str, PowerLaw]:
    """The window-moment fits with a caveat when some sample's spectrum reaches past the window (:func:`window_cut`)."""
    cut = []
    for label, s in zip(labels, spectra):
        ends = [f"{end} end, {100 * share:.2g}%" for end, share in zip(("short", "long"), window_cut(s))
                if share > FLAG_SHARE]
        if ends:
            cut.append(f"{label} ({'; '.join(ends)})")
    if not cut:
        return fits
    names = ", ".join(cut[:-1]) + " and " + cut[-1] if len(cut) > 1 else cut[0]
    plural = len(cut) > 1
    caveat = (f"the {'spectra' if plural else 'spectrum'} of {names} {'reach' if plural else 'reaches'} past the "
              "supported window (the share of the weight in its end half decade): tau_w and G_w miss the part "
              "beyond it, a bias the interval leaves out, so the interval does not test the expected values below, "
              "which hold for complete spectra (--diagnose fits tau_R and G0 of the bead-spring models instead)")
    return {k: dataclasses.replace(f, caveat=caveat) if k in ("time", "modulus") else f for k, f in fits.items()}


def series_scaling(spectra: Sequence[Spectrum], M: Sequence[float | None], c: Sequence[float | None], *,
                   diagnoses: Sequence[Any] | None = None, labels: Sequence[str] | None = None) -> dict[str, PowerLaw]:
    """Fit τ ∝ M^x and G ∝ c^y M^z over the samples whose M (and c) are known.

    ``time`` and ``modulus`` use τ_R and G0 of the Rouse diagnosis when every sample is diagnosed ``rouse``;
    otherwise the weight-average time τ_w of each spectrum (:func:`characteristic_time`) and G_w = η0/τ_w
    (:func:`characteristic_modulus`), and then, when at least two samples are diagnosed ``rouse``, also
    ``time_rouse`` and ``modulus_rouse`` over those.  The ``measure`` field of each fit says which; a fit of
    τ_w or G_w carries a ``caveat`` when the window cuts some sample's spectrum (:func:`window_cut`).
    ``labels`` name the samples in it (default: each spectrum's sample name).
    """
    n = len(spectra)
    labels = list(labels) if labels is not None else [s.sample for s in spectra]
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
    out = _window_caveats(out, spectra, labels)
    if len(rouse) >= 2:
        out.update(_series_fits(r_times, r_mods, M, c, rouse, *r_measures, suffix="_rouse"))
    return out
