"""One pair of samples compared: the shifts with intervals and the shape test against replicates of each sample."""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping
from typing import Any

import numpy as np
from scipy import stats

from ...data.record import field, record
from ...rounding import number
from ...spectrum.result import Spectrum
from ..uncertainty.noise import MIN_POINTS_PER_DECADE, density_words, points_per_decade, too_sparse
from .moduli import MIN_DECADES, MIN_WEIGHT, ModuliShift, fit_moduli_shift, weight_fraction
from .replicates import SampleUncertainty, _spread
from .shift import ShiftFit, fit_shift

__all__ = ["CI_LEVEL", "scaled_chi2", "PairComparison", "rouse_ratios"]



#: Confidence level of the reported intervals.
CI_LEVEL = 0.95


def _null_distances(unc: SampleUncertainty, min_overlap: float) -> np.ndarray:
    """D² between every two replicates i, j of one sample, each pair fitted like a real pair.

    The weights of pair (i, j) come from the spread of the *other* replicates, so that, as for a real pair,
    the residuals are independent of the σ that scales them (with in-sample weights the mean of D² over all
    pairs would be pinned at 1 by construction, while an out-of-sample σ² estimate inflates D² by
    E[σ²/s²] > 1).
    """
    reps = unc.replicates
    R = len(reps)
    out = []
    if R < 4 or unc.source == "band":
        sigmas = {(i, j): unc.sigma for i, j in itertools.combinations(range(R), 2)}
    else:
        sigmas = {}
        for i, j in itertools.combinations(range(R), 2):
            rest = np.delete(reps, [i, j], axis=0)
            sigmas[i, j] = np.sqrt(_spread(rest) + unc.noise**2)
    for (i, j), sig in sigmas.items():
        fit = fit_shift(unc.u, reps[i], sig, unc.u, reps[j], sig, min_overlap=min_overlap,
                        floors=(unc.floor_level, unc.floor_level))
        if fit is not None:
            out.append(fit.distance2)
    return np.array(out)


def scaled_chi2(null: np.ndarray) -> tuple[float, float]:
    """Return (g, h) of the scaled χ² g·χ²_h with the mean and variance of ``null``.

    g = var/(2 mean), h = 2 mean²/var (Satterthwaite 1946; Box 1954).
    """
    mean = float(np.mean(null))
    var = float(np.var(null, ddof=1))
    if not (mean > 0 and var > 0):
        return math.nan, math.nan
    return var / (2 * mean), 2 * mean * mean / var


# ----------------------------------------------------------------------------------------- results
@record
class PairComparison:
    """Two spectra compared: H_B(τ) ≈ b · H_A(τ/a) and the shape left after the shift.

    ``time_shift`` is a, ``modulus_shift`` is b, each with a 95 % interval from the spread of the shifts
    fitted between replicate pairs.  ``shape_distance`` is D² (the weighted mean square of the ln H residual
    after the shift, in units of its noise variance); ``p_value`` is P(g χ²_h ≥ D²) under the null
    distribution of D² between replicates of the same sample; ``same_shape`` is p ≥ ``significance`` (``None``
    when there are no replicates); the test's size is written under the JSON key ``level``.
    ``shape_rms`` is the unweighted rms of the ln H residual (a typical factor
    e^rms between the shifted spectra).  ``moduli`` (issue 16) holds the shift fitted on the moduli themselves,
    its test against each sample's noise, the overlap rule's numbers and the spectra's own shift
    (``spectrum_shift``); with enough overlap the reported shifts and ``same_shape`` are those of the moduli,
    without it ``same_shape`` is None and ``notes`` says "cannot tell: overlap …" (docs/compare.md 3b).
    """

    a: str
    b: str
    time_shift: float
    time_shift_ci: tuple[float, float]
    modulus_shift: float
    modulus_shift_ci: tuple[float, float]
    shape_distance: float
    shape_rms: float
    p_value: float
    p_value_empirical: float
    same_shape: bool | None
    significance: float = field(key="level")
    overlap: tuple[float, float]
    n_points: int
    null: Mapping[str, float]
    rouse: Mapping[str, Any] | None = None
    notes: tuple[str, ...] = ()
    moduli: Mapping[str, Any] | None = None


# ----------------------------------------------------------------------------------------- pairs
def _interval(center: float, values: np.ndarray) -> tuple[float, float]:
    """exp(center ± t·sd) from replicate estimates in logs (parametric bootstrap standard error)."""
    v = values[np.isfinite(values)]
    if len(v) < 2:
        return (math.nan, math.nan)
    half = float(stats.t.ppf(0.5 + CI_LEVEL / 2, len(v) - 1) * np.std(v, ddof=1))
    if not half > 0:  # identical replicate shifts: no zero-width interval is reported (issue 16)
        return (math.nan, math.nan)
    return (math.exp(center - half), math.exp(center + half))


def _none_for_nan(v: Any) -> Any:
    """A nested JSON-ready value with every non-finite float as None (so that it reads back as it was written)."""
    if isinstance(v, dict):
        return {k: _none_for_nan(x) for k, x in v.items()}
    if isinstance(v, list | tuple):
        return [_none_for_nan(x) for x in v]
    return None if isinstance(v, float) and not math.isfinite(v) else v


def _overlap_check(sa: Spectrum, sb: Spectrum, ms: ModuliShift | None, min_decades: float = MIN_DECADES,
                   min_weight: float = MIN_WEIGHT) -> tuple[bool, str, dict[str, Any]]:
    """The overlap rule of :mod:`tauspec.analysis.comparison.moduli`: (enough, note, numbers)."""
    if ms is None:
        return False, (f"cannot tell: no shift leaves {min_decades:g} decades of G' and G'' of both samples "
                       "overlapping"), {"decades": 0.0, "min_decades": min_decades, "min_weight": min_weight}
    a = math.exp(ms.log_a)
    w_lo = max(float(sa.omega[0]), a * float(sb.omega[0]))
    w_hi = min(float(sa.omega[-1]), a * float(sb.omega[-1]))
    fa = weight_fraction(sa, 1 / w_hi, 1 / w_lo)
    fb = weight_fraction(sb, a / w_hi, a / w_lo)
    nums = {"decades": ms.decades, "weight_a": fa, "weight_b": fb, "min_decades": min_decades,
            "min_weight": min_weight}
    enough = ms.decades >= min_decades - 1e-9 and fa >= min_weight and fb >= min_weight
    # rounded down, so that a value short of its threshold never reads as it (1.4996 decades as "1.50 (at least
    # 1.5 needed)", 49.96 % as "50% (at least 50%)")
    shown = math.floor(ms.decades * 100) / 100
    note = (f"overlap after shifting: {shown:.2f} decades of G' and G'' (at least {min_decades:g} needed), "
            f"{math.floor(100 * fa)}% and {math.floor(100 * fb)}% of each spectrum's weight inside (at least "
            f"{min_weight:.0%})")
    return enough, ("" if enough else "cannot tell: " + note), nums


def _moduli_decision(spectra: tuple[Spectrum, Spectrum], fit: ShiftFit, shifts: tuple, same: bool | None,
                     p: float, significance: float, rule: tuple[float, float] = (MIN_DECADES, MIN_WEIGHT),
                     ) -> tuple[dict[str, Any], bool | None, tuple, list[str]]:
    """The shifted moduli against each other's noise, the overlap rule, and the decision (docs/compare.md).

    Returns the ``moduli`` entry of the pair, ``same_shape``, the reported shifts (ln a, CI, ln b, CI) and notes.
    With too little overlap the answer is ``None`` ("cannot tell").  Otherwise the moduli test decides: it
    compares the data themselves against their own noise, whereas the spectra carry the inversion's bias,
    which depends on where the features sit in each window (measured: a Rouse chain against its copy shifted
    by a = 7, b = 0.4 over the same frequencies was called a different shape by the spectra in 3 of 5 seeds,
    with a 2–6 % off; the moduli gave p ≥ 0.7 and a, b within 1 %).  The reported shifts are then those of
    the moduli; the spectra's are kept under ``spectrum_shift``.
    """
    sa, sb = spectra
    ms = fit_moduli_shift((sa.omega, sa.storage, sa.loss), (sb.omega, sb.storage, sb.loss), fit.log_a,
                          min_decades=rule[0])
    enough, why, nums = _overlap_check(sa, sb, ms, *rule)
    spec = {"time_shift": math.exp(shifts[0]), "time_shift_ci": list(shifts[1]),
            "modulus_shift": math.exp(shifts[2]), "modulus_shift_ci": list(shifts[3]), "p_value": p}
    moduli = _none_for_nan({**(ms.to_dict() if ms is not None else {}), "overlap": nums, "spectrum_shift": spec})
    if not enough:
        return moduli, None, shifts, [why]
    sparse = min(points_per_decade(sa.omega), points_per_decade(sb.omega))
    if too_sparse(sparse):  # the noise from the roughness would hold the curves' own bends
        return moduli, None, shifts, [f"cannot tell: {density_words(sparse)}, fewer than "
                                      f"{MIN_POINTS_PER_DECADE:g}, leave the moduli's scatter unknown"]
    new_shifts = (ms.log_a, ModuliShift.interval(ms.log_a, ms.log_a_se, CI_LEVEL),
                  ms.log_b, ModuliShift.interval(ms.log_b, ms.log_b_se, CI_LEVEL))
    notes = []
    decided = bool(ms.p_value >= significance)
    if not decided:
        notes.append(f"the shifted moduli differ beyond their noise (chi2 = {ms.chi2:.4g} on {ms.n - 2} degrees of "
                     f"freedom, p = {ms.p_value:.3g})")
        notes += _where_they_differ(ms, sb.sample)
    elif same is False:
        notes.append(f"the spectra differ beyond their replicate spread (p = {p:.3g}) while the shifted moduli agree "
                     f"within their noise (p = {ms.p_value:.3g}): the difference lies in the inversion (its bias "
                     "depends on where the features sit in each window), not in the data")
    return moduli, decided, new_shifts, notes


#: Share of the misfit in one third of the overlap above which the note says where the moduli differ (a third
#: of it would be an even spread; our choice).
MISFIT_CONCENTRATED = 0.6


def _where_they_differ(ms: ModuliShift, name_b: str) -> list[str]:
    """Where in the overlap the shifted moduli differ, when most of the misfit lies in one third of it.

    Two samples that relax alike but for one end of the spectrum differ there only: chains of different length
    (N ∝ M) superpose with the Rouse shifts except at their shortest modes (Ferry 1980, ch. 9), so their
    misfit sits at the high-frequency end.
    """
    shares = ms.misfit_thirds
    if not all(math.isfinite(v) for v in shares):
        return []
    k = int(np.argmax(shares))
    if shares[k] < MISFIT_CONCENTRATED:
        return []
    lo, hi = (number(c) for c in ms.cuts)
    where = (f"lowest third of the overlap ({name_b} below {lo} rad/s): the samples differ at long times",
             f"middle third of the overlap ({name_b} between {lo} and {hi} rad/s)",
             f"highest third of the overlap ({name_b} above {hi} rad/s): the samples differ at short times, as "
             "chains of different length do at their shortest modes")[k]
    return [f"most of that misfit ({100 * shares[k]:.0f} %) lies in the {where}"]


def _compare_pair(name_a: str, name_b: str, ua: SampleUncertainty, ub: SampleUncertainty, null: np.ndarray,
                  significance: float, min_overlap: float, spectra: tuple[Spectrum, Spectrum] | None = None,
                  rule: tuple[float, float] = (MIN_DECADES, MIN_WEIGHT)) -> PairComparison:
    floors = (ua.floor_level, ub.floor_level)
    fit = fit_shift(ua.u, ua.ell, ua.sigma, ub.u, ub.ell, ub.sigma, min_overlap=min_overlap, floors=floors)
    nan2 = (math.nan, math.nan)
    if fit is None:
        return PairComparison(a=name_a, b=name_b, time_shift=math.nan, time_shift_ci=nan2, modulus_shift=math.nan,
                              modulus_shift_ci=nan2, shape_distance=math.nan, shape_rms=math.nan, p_value=math.nan,
                              p_value_empirical=math.nan, same_shape=None, significance=significance, overlap=nan2,
                              n_points=0,
                              null={}, notes=(f"no shift leaves {min_overlap:.0%} of the narrower window "
                                              "overlapping; not compared",))
    R = min(len(ua.replicates), len(ub.replicates))
    la, lb = [], []
    for i in range(R):
        f = fit_shift(ua.u, ua.replicates[i], ua.sigma, ub.u, ub.replicates[i], ub.sigma, min_overlap=min_overlap,
                      floors=floors)
        if f is not None:
            la.append(f.log_a)
            lb.append(f.log_b)
    g, h = scaled_chi2(null) if len(null) >= 3 else (math.nan, math.nan)
    notes = []
    if math.isfinite(g):
        p = float(stats.chi2.sf(fit.distance2 / g, h))
        p_emp = float((1 + np.sum(null >= fit.distance2)) / (1 + len(null)))
        same = bool(p >= significance)
    else:
        p = p_emp = math.nan
        same = None
        notes.append("too few replicates for the test of the spectra (need at least 3 replicate pairs)")
    shifts = (fit.log_a, _interval(fit.log_a, np.array(la)), fit.log_b, _interval(fit.log_b, np.array(lb)))
    moduli = None
    if spectra is not None:
        moduli, same, shifts, more = _moduli_decision(spectra, fit, shifts, same, p, significance, rule)
        notes.extend(more)
    if fit.at_edge:
        notes.append(f"the best shift lies at the edge of the admissible range (overlap down to {min_overlap:.0%} of "
                     "the narrower window): either the shapes differ, or the samples are too far apart in τ for these "
                     "windows; a and b are not reliable, and the shape test only covers the shifts allowed")
    return PairComparison(
        a=name_a, b=name_b,
        time_shift=math.exp(shifts[0]), time_shift_ci=shifts[1],
        modulus_shift=math.exp(shifts[2]), modulus_shift_ci=shifts[3],
        shape_distance=fit.distance2, shape_rms=fit.rms, p_value=p, p_value_empirical=p_emp, same_shape=same,
        significance=significance, overlap=fit.overlap, n_points=fit.n,
        null={"n": len(null), "mean": float(np.mean(null)) if len(null) else math.nan,
              "var": float(np.var(null, ddof=1)) if len(null) > 1 else math.nan, "scale": g, "dof": h},
        notes=tuple(notes), moduli=moduli,
    )


def rouse_ratios(da: Any, db: Any) -> dict[str, Any] | None:
    """τ_R,B/τ_R,A and G0_B/G0_A with 95 % intervals when both diagnoses say ``rouse``.

    Each diagnosis interval is read as a 95 % interval symmetric in logs; the standard errors of the logs add
    in quadrature.
    """
    if da is None or db is None or getattr(da, "verdict", None) != "rouse" or getattr(db, "verdict", None) != "rouse":
        return None
    z = stats.norm.ppf(0.5 + CI_LEVEL / 2)
    out: dict[str, Any] = {}
    for key in ("tau_R", "G0"):
        va, vb = float(getattr(da, key)), float(getattr(db, key))
        se2 = sum(((math.log(ci[1]) - math.log(ci[0])) / (2 * z)) ** 2 if ci[0] > 0 and ci[1] > 0 else math.nan
                  for ci in (getattr(da, f"{key}_ci"), getattr(db, f"{key}_ci")))
        ratio = vb / va
        half = z * math.sqrt(se2) if math.isfinite(se2) else math.nan
        out[f"{key}_ratio"] = ratio
        out[f"{key}_ratio_ci"] = [ratio * math.exp(-half), ratio * math.exp(half)]
    return out
