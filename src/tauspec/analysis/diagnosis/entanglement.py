"""The numbers a polymer lab wants from an entangled melt: plateau modulus, terminal time, M_e and Z.

Estimators of the plateau modulus G_N⁰ (each returns an :class:`Estimate` with a 95 % interval):

* ``bsw_fit`` — the BSW form (Baumgaertel, Schausberger & Winter 1990) fitted to the terminal and
  entanglement zones (frequencies up to half a decade beyond the G'' minimum when the window reaches it),
  G_N⁰ = the integral of its entanglement part (:mod:`tauspec.models.bsw`);
* ``spectrum_integral`` — the integral of the recovered H(τ) over the entanglement zone,
  G_N⁰ = ∫_{τ_e}^∞ H d ln τ, from where the spectrum leaves the transition zone (its minimum below the
  entanglement peak, or the short end of the supported window) upwards (Ferry 1980, ch. 13);
* ``loss_peak_integral`` — G_N⁰ = (2/π) ∫ G''(ω) d ln ω over the terminal loss peak (Ferry 1980, ch. 13),
  cut at the G'' minimum, the terminal tail below ω_min added as G''(ω_min) (G'' ∝ ω there);
  without a G'' minimum in the window, twice the low-frequency half of the peak, (4/π) ∫ up to the G''
  maximum (Raju, Rachapudy & Graessley 1979; from memory);
* ``tan_delta_minimum`` — G' at the minimum of tan δ (Wu 1989; Liu et al. 2006).

The first that applies and describes the data is the headline ``GN0``; the others are reported beside it
and a note says when they disagree (intervals that do not overlap).  The quick estimators are biased low on
BSW melts (measured: the tan δ minimum 10–41 % and the loss-peak integral cut at the G'' minimum 30–52 %
low), which is why they are never the headline while one of the first two applies.

Terminal time ``tau_d``: τ_max of the BSW fit (the cut-off of the spectrum, the longest relaxation time),
otherwise the weight-average terminal time G'/(ωG'') at the lowest frequencies (→ η0 J_e⁰, Ferry 1980,
ch. 3), with a bootstrap interval (a lower bound when the terminal zone is not reached).

Entanglement molecular weight: M_e = ρRT/G_N⁰ (Ferry 1980, ch. 13; the convention without the factor 4/5
of Doi & Edwards 1986 / Larson et al. 2003, which is given in a note), and Z = M/M_e.

References
----------
Baumgaertel, M., Schausberger, A. & Winter, H. H. (1990). Rheol. Acta 29, 400.
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, ch. 13.
Raju, V. R., Rachapudy, H. & Graessley, W. W. (1979). J. Polym. Sci. Polym. Phys. Ed. 17, 1223 (from memory).
Wu, S. (1989). J. Polym. Sci. B Polym. Phys. 27, 723 (from memory).
Liu, C., He, J., van Ruymbeke, E., Keunings, R. & Bailly, C. (2006). Polymer 47, 4461 (from memory).
Doi, M. & Edwards, S. F. (1986). *The Theory of Polymer Dynamics*, Oxford, ch. 7.
Larson, R. G., Sridhar, T., Leal, L. G., McKinley, G. H., Likhtman, A. E. & McLeish, T. C. B. (2003).
J. Rheol. 47, 809 (M_e with the 4/5 factor; from memory).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
from scipy import stats

from ...data.record import record
from ...models import bsw as bswmod
from ...models.signatures import SHAPE_SMOOTH, end_slopes, entangled_spectrum_shape, gauss_smooth
from ...spectrum.kernels import quadrature_weights

__all__ = ["Estimate", "Entanglement", "analyse_entanglement", "bsw_estimate", "describes", "tan_delta_minimum",
           "loss_peak_integral", "spectrum_integral", "entanglement_mass", "mass_intervals", "GAS_CONSTANT",
           "BOOTSTRAP"]

#: Molar gas constant, J/(mol K) (CODATA 2018, exact since the 2019 SI).
GAS_CONSTANT = 8.314462618

#: Resamples of the parametric bootstrap of the quick estimators (their intervals), seed fixed.
BOOTSTRAP = 200


@record
class Estimate:
    """One estimate of G_N⁰ (Pa) with its 95 % interval, method, source and a note."""

    method: str
    value: float
    ci: tuple[float, float] = (math.nan, math.nan)
    source: str
    note: str = ""


@record
class Entanglement:
    """The entanglement analysis of one sweep (all SI except ``Me`` in g/mol).

    ``Me_ci`` and ``Z_ci`` carry the interval of G_N⁰ through M_e = ρRT/G_N⁰ and Z = M/M_e (a monotone map:
    the same level), with ρ, T and M taken as exact (:func:`mass_intervals`).
    """

    GN0: float
    GN0_ci: tuple[float, float] = (math.nan, math.nan)
    GN0_method: str = ""
    estimates: tuple[Estimate, ...] = ()
    tau_d: float
    tau_d_ci: tuple[float, float] = (math.nan, math.nan)
    tau_d_method: str = ""
    Me: float = math.nan
    Me_ci: tuple[float, float] = (math.nan, math.nan)
    Me_convention: str = ""
    Z: float = math.nan
    Z_ci: tuple[float, float] = (math.nan, math.nan)
    bsw: bswmod.BSWFit | None = None
    notes: tuple[str, ...] = ()


# ------------------------------------------------------------------------------------------ quick estimators
def _interior_extremum(x: np.ndarray, y: np.ndarray, kind: str) -> tuple[float, int] | None:
    """Location (in x) of the interior minimum/maximum of y, and its index.

    A parabola through the extreme point and its two neighbours; None when the extreme point is one of the
    two outermost points at either end.
    """
    i = int(np.argmin(y) if kind == "min" else np.argmax(y))
    if i < 2 or i > len(y) - 3:
        return None
    x0, x1, x2 = x[i - 1: i + 2]
    y0, y1, y2 = y[i - 1: i + 2]
    den = (x0 - x1) * (x0 - x2) * (x1 - x2)
    a = (x2 * (y1 - y0) + x1 * (y0 - y2) + x0 * (y2 - y1)) / den
    b = (x2 * x2 * (y0 - y1) + x1 * x1 * (y2 - y0) + x0 * x0 * (y1 - y2)) / den
    xv = -b / (2 * a) if a != 0 else x1
    return float(min(max(xv, x0), x2)), i


def tan_delta_minimum(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray) -> float:
    """G' at the minimum of tan δ (Wu 1989; Liu et al. 2006); NaN when the minimum is not inside the window.

    The minimum of ln tan δ against ln ω is located by a parabola through the lowest point and its
    neighbours; G' there is interpolated linearly in log–log.
    """
    x = np.log(omega)
    ext = _interior_extremum(x, np.log(loss / storage), "min")
    if ext is None:
        return math.nan
    return float(np.exp(np.interp(ext[0], x, np.log(storage))))


def loss_peak_integral(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray) -> tuple[float, str]:
    """(2/π) ∫ G'' d ln ω over the terminal loss peak (Ferry 1980, ch. 13); (NaN, why) when not possible.

    Cut at the G'' minimum above the terminal peak when the window holds it; otherwise (4/π) ∫ up to the
    peak (twice its low-frequency half; Raju et al. 1979, from memory).  The terminal tail below ω_min is
    G''(ω_min)/s, s the G'' slope over the lowest half decade (∫_0^{ω_min} G'' dω/ω for G'' ∝ ω^s).
    Trapezoid rule in ln ω; the cut point is found by a parabola in ln G''.
    """
    x, y = np.log(omega), np.asarray(loss, dtype=float)
    peak = _interior_extremum(x, np.log(y), "max")
    if peak is None:
        return math.nan, "no terminal loss peak inside the window"
    s = end_slopes(omega, storage, loss)[1]
    if not s > 0.2:
        return math.nan, "G'' does not fall towards low frequency: the terminal tail is not seen"
    tail = float(y[0] / s)
    after = x > peak[0]
    trough = _interior_extremum(x[after], np.log(y[after]), "min") if np.count_nonzero(after) >= 5 else None
    end, factor, how = (trough[0], 2 / math.pi, "cut at the G'' minimum") if trough is not None else \
        (peak[0], 4 / math.pi, "twice the low-frequency half of the peak (no G'' minimum in the window)")
    keep = x <= end
    xs = np.append(x[keep], end)
    ys = np.append(y[keep], math.exp(float(np.interp(end, x, np.log(y)))))
    return factor * (tail + float(np.trapezoid(ys, xs))), how


def spectrum_integral(spectrum: Any) -> tuple[float, str]:
    """∫_{τ_e}^∞ H d ln τ over the entanglement zone of a recovered spectrum; (NaN, why) when not possible.

    τ_e is where the spectrum leaves the transition zone: the minimum of H below the entanglement peak (the
    largest H at long times) inside the supported window, or the short end of the window when H rises all
    the way to its peak (Ferry 1980, ch. 13; Davies & Anderssen 1997 for the window).
    """
    tau = np.asarray(spectrum.tau, dtype=float)
    H = np.clip(np.asarray(spectrum.H, dtype=float), 0.0, None)
    m = np.asarray(spectrum.in_window)
    if np.count_nonzero(m) < 5 or not np.any(H[m] > 0):
        return math.nan, "the spectrum is empty inside its window"
    idx = np.nonzero(m)[0]
    # the entanglement peak: the last local maximum of the smoothed H inside the window (the lumps of a
    # weakly regularized spectrum are not peaks), reached by a rise of at least 25 % over 0.3 decade or more
    hw = gauss_smooth(tau, H, SHAPE_SMOOTH)[idx]
    peaks = [k for k in range(1, len(hw) - 1) if hw[k] >= hw[k - 1] and hw[k] >= hw[k + 1] and hw[k] > 0.05 * hw.max()]
    if not peaks:
        return math.nan, "no entanglement peak of H inside the window"
    p = peaks[-1]
    lo = int(np.argmin(hw[: p + 1]))
    if hw[lo] > 0.8 * hw[p] or math.log10(tau[idx[p]] / tau[idx[lo]]) < 0.3:
        return math.nan, "H does not rise to its last peak inside the window: no entanglement zone is resolved"
    start = idx[lo]
    where = "the minimum of H below the entanglement peak" if lo > 0 else "the short end of the supported window"
    w = quadrature_weights(tau)
    # a lower bound for a BSW melt: the τ^(n_e) zone continues below τ_e ((τ_e/τ_max)^(n_e) of G_N⁰); continuing
    # the rise of the regularized H below τ_e was tried and gave −36 % to +87 % on the test melts
    return float(np.sum((w * H)[start:])), (f"from tau_e = {tau[start]:.3g} s ({where}); a lower bound: the "
                                            "entanglement zone below tau_e is not counted")


def _bootstrap(fn: Callable[[np.ndarray, np.ndarray], float], omega: np.ndarray, storage: np.ndarray,
               loss: np.ndarray, noise: float, seed: int = 0) -> tuple[float, float]:
    """95 % percentile interval of ``fn`` over data re-noised at the relative ``noise``.

    Parametric bootstrap (Efron & Tibshirani 1993, ch. 6 and 13); (NaN, NaN) when fewer than half the
    resamples give a value.
    """
    rng = np.random.default_rng(seed)
    vals = []
    for _ in range(BOOTSTRAP):
        f1 = np.maximum(1 + noise * rng.standard_normal(len(omega)), 1e-3)
        f2 = np.maximum(1 + noise * rng.standard_normal(len(omega)), 1e-3)
        v = fn(storage * f1, loss * f2)
        if math.isfinite(v):
            vals.append(v)
    if len(vals) < BOOTSTRAP // 2:
        return math.nan, math.nan
    lo, hi = np.percentile(vals, [2.5, 97.5])
    return float(lo), float(hi)


# ------------------------------------------------------------------------------------------- the analysis
def bsw_estimate(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, free_reduced_chi2: float,
                 free_dof: int) -> tuple[Estimate | None, bswmod.BSWFit | None]:
    """The BSW-form fit over the terminal and entanglement zones, as an Estimate, and the fit.

    Fitted with and without the transition term (the lower BIC is kept); adequate when its reduced χ² passes
    the 1 % F test against the free discrete
    spectrum (as the bead-spring fits, docs/diagnosis.md).  The Estimate's note starts with "the BSW form
    does not describe" when it is not adequate.
    """
    x = np.log(omega)
    peak = _interior_extremum(x, np.log(loss), "max")
    cut = len(omega)
    how = "the whole window"
    if peak is not None:
        after = x > peak[0]
        trough = _interior_extremum(x[after], np.log(loss[after]), "min") if np.count_nonzero(after) >= 5 else None
        if trough is not None:
            cut = int(np.searchsorted(x, trough[0] + 0.5 * math.log(10), side="right"))
            how = "frequencies up to half a decade beyond the G'' minimum"
    sel = slice(0, max(cut, 8))
    fits = [bswmod.fit_bsw(omega[sel], storage[sel], loss[sel], glassy=g) for g in (True, False)]

    def bic(f: bswmod.BSWFit) -> float:
        return f.n_data * math.log(max(f.chi2, 1e-300) / f.n_data) + f.n_params * math.log(f.n_data)

    fit = min((f for f in fits if f.G_N > 0), key=bic, default=None)
    if fit is None:
        return None, None
    crit = float(stats.f.ppf(0.99, max(fit.n_data - fit.n_params, 1), max(free_dof, 1)))
    ratio = fit.reduced_chi2 / max(free_reduced_chi2, 1e-300)
    note = (f"fitted over {how}; n_e = {fit.n_e:.3f}, tau_max = {fit.tau_max:.4g} s; reduced chi2 {ratio:.3g} "
            f"times that of the free discrete spectrum (F test at 1 %: <= {crit:.3g})")
    if fit.at_bound:
        note += "; at a search bound: " + ", ".join(fit.at_bound)
    if ratio > crit or "G_N" in fit.at_bound or "tau_max" in fit.at_bound:
        return Estimate(method="bsw_fit", value=fit.G_N, ci=(math.nan, math.nan),
                        source="Baumgaertel, Schausberger & Winter 1990",
                        note="the BSW form does not describe these data: " + note), fit
    return Estimate(method="bsw_fit", value=fit.G_N, ci=fit.G_N_ci, source="Baumgaertel, Schausberger & Winter 1990",
                    note=note), fit


def analyse_entanglement(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, *, noise: float,
                         spectrum: Any = None, free_reduced_chi2: float = math.nan, free_dof: int = 1,
                         meta: Mapping[str, Any] | None = None,
                         bsw: tuple[Estimate | None, bswmod.BSWFit | None] | None = None) -> Entanglement:
    """Plateau modulus (several estimators), terminal time, M_e and Z of an entangled sample.

    ``noise`` is the relative noise of the data (for the bootstrap intervals of the quick estimators);
    ``free_reduced_chi2``/``free_dof`` those of the free discrete spectrum (adequacy of the BSW fit);
    ``meta`` may hold ``density`` (kg/m³), ``temperature`` (K) and ``molecular_weight`` (g/mol); ``bsw`` is
    the result of :func:`bsw_estimate` when already computed.
    """
    w, gp, gpp = (np.asarray(a, dtype=float) for a in (omega, storage, loss))
    noise = max(float(noise), 1e-3) if math.isfinite(noise) else 0.01
    est: list[Estimate] = []
    bsw_est, fit = bsw if bsw is not None else bsw_estimate(w, gp, gpp, free_reduced_chi2, free_dof)
    if bsw_est is not None:
        est.append(bsw_est)
    # the integral needs an entanglement zone in the spectrum: its shape seen in H, or the BSW form describing
    # the data (a spectrum of decade-spaced lumps, like a broad branched melt's, has peaks that are not one)
    zone = spectrum is not None and (describes(bsw_est) or entangled_spectrum_shape(
        np.asarray(spectrum.tau), np.asarray(spectrum.H), tuple(spectrum.window))[1] > 0)
    if zone:
        v, how = spectrum_integral(spectrum)
        if math.isfinite(v):
            est.append(Estimate(method="spectrum_integral", value=v, ci=(math.nan, math.nan),
                                source="Ferry 1980, ch. 13",
                                note=f"integral of the recovered H(tau) {how}; no interval (it would need the "
                                     "replicate spectra of the confidence bands)"))
    v, how = loss_peak_integral(w, gp, gpp)
    if math.isfinite(v):
        ci = _bootstrap(lambda a, b: loss_peak_integral(w, a, b)[0], w, gp, gpp, noise)
        est.append(Estimate(method="loss_peak_integral", value=v, ci=ci, source="Ferry 1980, ch. 13",
                            note=how + "; quick estimator, biased low on BSW melts"))
    v = tan_delta_minimum(w, gp, gpp)
    if math.isfinite(v):
        ci = _bootstrap(lambda a, b: tan_delta_minimum(w, a, b), w, gp, gpp, noise)
        est.append(Estimate(method="tan_delta_minimum", value=v, ci=ci, source="Wu 1989; Liu et al. 2006",
                            note="G' at the minimum of tan delta; quick estimator, biased low on BSW melts"))
    return _assemble(est, fit, (w, gp, gpp, noise), meta or {})


def describes(e: Estimate | None) -> bool:
    """True when the estimate's model describes the data (the BSW fit passed its adequacy test)."""
    return e is not None and not e.note.startswith("the BSW form does not")


def _headline(est: list[Estimate]) -> Estimate | None:
    order = ("bsw_fit", "spectrum_integral", "loss_peak_integral", "tan_delta_minimum")
    for m in order:
        for e in est:
            if e.method == m and describes(e):
                return e
    return None


def _assemble(est: list[Estimate], fit: bswmod.BSWFit | None, data: tuple, meta: Mapping[str, Any]) -> Entanglement:
    w, gp, gpp, noise = data
    notes: list[str] = []
    head = _headline(est)
    nan2 = (math.nan, math.nan)
    if head is None:
        notes.append("no estimator of the plateau modulus applies: the window shows neither a tan delta minimum, "
                     "a terminal loss peak nor an entanglement zone of the spectrum")
    else:
        for e in est:
            if e is head or not math.isfinite(e.value):
                continue
            lo, hi = e.ci if all(math.isfinite(c) for c in e.ci) else (e.value, e.value)
            hlo, hhi = head.ci if all(math.isfinite(c) for c in head.ci) else (head.value, head.value)
            if hi < hlo or lo > hhi:
                notes.append(f"{e.method} gives {e.value:.4g} Pa, {100 * (e.value / head.value - 1):+.0f} % from the "
                             f"headline {head.method}: they disagree beyond their intervals")
    good_bsw = fit is not None and head is not None and head.method == "bsw_fit"
    if good_bsw:
        tau_d, tau_ci, tau_how = fit.tau_max, fit.tau_max_ci, "tau_max of the BSW fit (cut-off of the spectrum)"
    else:
        tau_d, tau_ci, tau_how = _terminal_time(w, gp, gpp, noise)
    GN0 = head.value if head is not None else math.nan
    Me, conv, Z = entanglement_mass(GN0, meta)
    if math.isfinite(Me):
        notes.append(f"with the factor 4/5 (Doi & Edwards 1986; Larson et al. 2003) M_e = {0.8 * Me:.4g} g/mol")
    return Entanglement(GN0=GN0, GN0_ci=head.ci if head is not None else nan2,
                        GN0_method=head.method if head is not None else "", estimates=tuple(est), tau_d=tau_d,
                        tau_d_ci=tau_ci, tau_d_method=tau_how, Me=Me, Me_convention=conv, Z=Z, bsw=fit,
                        notes=tuple(notes))


def terminal_ratio(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray) -> float:
    """G'/(ω G'') at the lowest frequencies (geometric mean over the lowest three points).

    In the terminal zone G'/(ωG'') → η0 J_e⁰ = τ_w = ∫Hτ² d ln τ / ∫Hτ d ln τ, the weight-average terminal
    time (Ferry 1980, ch. 3); before the terminal slopes are reached it is a lower bound.
    """
    k = min(3, len(omega))
    return float(np.exp(np.mean(np.log(storage[:k] / (omega[:k] * loss[:k])))))


def _terminal_time(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray,
                   noise: float) -> tuple[float, tuple[float, float], str]:
    """τ_d when no BSW fit describes the data: the terminal ratio with a bootstrap interval."""
    t = terminal_ratio(omega, storage, loss)
    ci = _bootstrap(lambda a, b: terminal_ratio(omega, a, b), omega, storage, loss, noise)
    s1, s2 = end_slopes(omega, storage, loss)
    how = ("weight-average terminal time G'/(omega G'') at the lowest frequencies (tends to eta0 J_e0 from below, "
           "Ferry 1980 ch. 3; the interval is the noise's only)")
    if not (s1 >= 1.7 and 0.85 <= s2 <= 1.15):
        how += "; the terminal slopes are not reached, so only a lower bound"
        ci = (ci[0], math.inf)
    return t, ci, how


def mass_intervals(ent: Entanglement) -> Entanglement:
    """``ent`` with M_e's and Z's intervals from its G_N⁰ interval (NaN where that has none).

    M_e ∝ 1/G_N⁰ and Z ∝ G_N⁰ at fixed ρ, T and M, so the ends map to the ends (swapped for M_e); the
    uncertainty of the density, temperature and molecular weight is not included.
    """
    lo, hi = ent.GN0_ci
    if not (math.isfinite(ent.Me) and math.isfinite(lo) and math.isfinite(hi) and lo > 0 and ent.GN0 > 0):
        return dataclasses.replace(ent, Me_ci=(math.nan, math.nan), Z_ci=(math.nan, math.nan))
    k = ent.Me * ent.GN0  # = ρRT in g/mol·Pa
    z = ent.Z / ent.GN0 if math.isfinite(ent.Z) else math.nan
    return dataclasses.replace(ent, Me_ci=(k / hi, k / lo), Z_ci=(z * lo, z * hi) if math.isfinite(z) else
                               (math.nan, math.nan))


def entanglement_mass(GN0: float, meta: Mapping[str, Any]) -> tuple[float, str, float]:
    """(M_e in g/mol, convention, Z) from M_e = ρRT/G_N⁰ (Ferry 1980, ch. 13) and Z = M/M_e.

    ``meta``: ``density`` in kg/m³, ``temperature`` in K, ``molecular_weight`` in g/mol (any may be missing).
    """
    rho, T, M = (meta.get(k) for k in ("density", "temperature", "molecular_weight"))
    if not (math.isfinite(GN0) and GN0 > 0 and rho and T):
        return math.nan, "", math.nan
    Me = float(rho) * GAS_CONSTANT * float(T) / GN0 * 1000.0  # kg/mol → g/mol
    conv = "M_e = rho R T / G_N0 (Ferry 1980, ch. 13; without the 4/5 factor), g/mol"
    Z = float(M) / Me if M else math.nan
    return Me, conv, Z
