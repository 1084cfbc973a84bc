r"""Comparing relaxation spectra between samples and along a series.

For two spectra A and B, :func:`fit_shift` finds the time-shift factor a and
the modulus-shift factor b of

    H_B(τ) ≈ b · H_A(τ/a)

by weighted least squares in ℓ = ln(H + ε) on the overlap of the two supported
windows after the shift; the weighted mean square residual left after the
shift is the *shape distance*.  Whether it is larger than the noise alone would
give is decided by a test whose null distribution comes from replicate spectra
of each sample (parametric resampling: the fitted moduli re-noised at the
sample's own noise level and inverted again with the same settings).
:func:`compare` does this for every pair (or every sample against a
reference), ranks the pairs, and fits power laws τ ∝ M^x and G ∝ c^y M^z
along a series.  The method, the statistic and its null distribution are in
``docs/compare.md``.

References
----------
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, ch. 9 (Rouse: τ_R ∝ M²,
G0 = cRT/M, J_e⁰ = 2M/(5cRT)) and ch. 11 (shift factors).
Efron, B. & Tibshirani, R. J. (1993). *An Introduction to the Bootstrap*, Chapman & Hall, ch. 6 (parametric
bootstrap standard errors).
Satterthwaite, F. E. (1946). Biometrics Bull. 2:110; Box, G. E. P. (1954). Ann. Math. Stat. 25:290 (a quadratic
form in Gaussian variables approximated by a scaled χ² with matched mean and variance).
Davies, A. R. & Anderssen, R. S. (1997). J. Non-Newtonian Fluid Mech. 73:163 (the supported window).
"""

from __future__ import annotations

import dataclasses
import itertools
import math
import types
import warnings
import zlib
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
from scipy import optimize, stats

from ...data.sweep import Sweep
from ...errors import SettingsError, TauspecError, WeakResultWarning
from ...spectrum.invert import SCHEMA as SPECTRUM_SCHEMA
from ...spectrum.invert import LCurve, Spectrum, build_problem, invert
from ...spectrum.kernels import quadrature_weights
from ..diagnosis.diagnose import diagnose as diagnose_sweep

__all__ = [
    "compare",
    "Comparison",
    "PairComparison",
    "PowerLaw",
    "SampleUncertainty",
    "fit_shift",
    "ShiftFit",
    "sample_uncertainty",
    "spectrum_from_dict",
    "diagnosis_from_dict",
    "characteristic_time",
    "characteristic_modulus",
    "fit_power_law",
    "series_scaling",
    "SCHEMA",
    "LEVEL",
]

#: Version of the JSON form of a Comparison.
SCHEMA = "tauspec.comparison/1"

#: Level of the shape test: `same_shape` is false when the p-value is below it.
LEVEL = 0.05

#: Replicate spectra per sample for the null distribution and the intervals.
N_REPLICATES = 12

#: ε in ℓ = ln(H + ε) as a fraction of the largest H in the window (our choice; see docs/compare.md).
LOG_FLOOR = 1e-2

#: Width (standard deviation in ln τ) of the Gaussian that smooths every spectrum before comparison.
SMOOTH = 0.3

#: Smallest overlap of the two windows after the shift, as a fraction of the narrower window (our choice).
MIN_OVERLAP = 0.5

#: Replicates whose strength lies more than this many decades from the replicates' median are dropped.
STRENGTH_DECADES = 1.0

#: Confidence level of the reported intervals.
CI_LEVEL = 0.95


# ----------------------------------------------------------------------------------------- loading results
def spectrum_from_dict(d: Mapping[str, Any], source: str = "<result>") -> Spectrum:
    """Rebuild a :class:`~tauspec.spectrum.Spectrum` from its JSON form (``Spectrum.to_dict()``).

    ``null`` in an array (a NaN or infinity when written) becomes NaN.

    Raises
    ------
    TauspecError
        When a key is missing or the schema is not a spectrum's.
    """
    if not isinstance(d, Mapping):
        raise TauspecError("not a spectrum result (expected a JSON object)", source)
    if d.get("schema") != SPECTRUM_SCHEMA and "status" in d:  # a batch result folder wraps the spectrum
        if not isinstance(d.get("spectrum"), Mapping):
            raise TauspecError(f"the stored result holds no spectrum (status {d.get('status')!r}"
                               + (f": {d['error']}" if d.get("error") else "") + ")", source)
        d = d["spectrum"]
    schema = d.get("schema")
    if schema != SPECTRUM_SCHEMA:
        raise TauspecError(f"not a spectrum result (schema {schema!r}, expected {SPECTRUM_SCHEMA!r})", source)

    def arr(obj: Any, key: str) -> np.ndarray:
        try:
            return np.array([math.nan if v is None else float(v) for v in obj[key]], dtype=float)
        except KeyError:
            raise TauspecError(f"spectrum result has no {key!r}", source) from None
        except (TypeError, ValueError):
            raise TauspecError(f"spectrum result: {key!r} is not a list of numbers", source) from None

    def num(obj: Any, key: str) -> float:
        try:
            v = obj[key]
        except KeyError:
            raise TauspecError(f"spectrum result has no {key!r}", source) from None
        try:
            return math.nan if v is None else float(v)
        except (TypeError, ValueError):
            raise TauspecError(f"spectrum result: {key!r} is not a number", source) from None

    lc = d.get("lcurve")
    if not isinstance(lc, Mapping):
        raise TauspecError("spectrum result has no 'lcurve'", source)
    lcurve = LCurve(strength=arr(lc, "lambda"), residual_norm=arr(lc, "residual_norm"),
                    solution_norm=arr(lc, "solution_norm"), curvature=arr(lc, "curvature"), gcv=arr(lc, "gcv"),
                    index=int(num(lc, "index")) if lc.get("index") is not None else 0, note=str(lc.get("note", "")))
    tau, H = arr(d, "tau"), arr(d, "H")
    omega = arr(d, "omega")
    if len(tau) != len(H) or len(tau) < 2 or np.any(~np.isfinite(tau)) or np.any(tau <= 0):
        raise TauspecError("spectrum result: 'tau' and 'H' must be equal-length lists of positive times", source)
    if not np.all(np.isfinite(H)):
        raise TauspecError("spectrum result: 'H' has missing or non-finite values", source)
    window = d.get("window")
    if not (isinstance(window, Sequence) and len(window) == 2):
        raise TauspecError("spectrum result: 'window' must be [tau_lo, tau_hi]", source)
    return Spectrum(
        tau=tau, H=H, strength=num(d, "lambda"), select=str(d.get("select", "")),
        window=(float(window[0]), float(window[1])), eta_s=num(d, "eta_s"), G_e=num(d, "G_e"),
        residual_rms=num(d, "residual_rms"), omega=omega, storage=arr(d, "storage"), loss=arr(d, "loss"),
        storage_fit=arr(d, "storage_fit"), loss_fit=arr(d, "loss_fit"), lcurve=lcurve,
        sample=str(d.get("sample", "sample")), source=str(d.get("source", source)),
        meta=dict(d.get("meta") or {}), warnings=tuple(d.get("warnings") or ()), settings=dict(d.get("settings") or {}),
    )


def diagnosis_from_dict(d: Mapping[str, Any]) -> Any:
    """The stored bead-spring diagnosis of a result (``result["diagnosis"]``) as an object, or None.

    Only the fields the comparison uses are kept: ``verdict``, ``tau_R``, ``tau_R_ci``, ``G0``, ``G0_ci``.
    """
    diag = d.get("diagnosis") if isinstance(d, Mapping) else None
    if not isinstance(diag, Mapping) or "verdict" not in diag:
        return None

    def value(key: str) -> float:
        v = diag.get(key)
        return math.nan if v is None else float(v)

    def interval(key: str) -> tuple[float, float]:
        ci = diag.get(key) or [None, None]
        return tuple(math.nan if v is None else float(v) for v in ci[:2])

    try:
        return types.SimpleNamespace(verdict=str(diag["verdict"]), tau_R=value("tau_R"), tau_R_ci=interval("tau_R_ci"),
                                     G0=value("G0"), G0_ci=interval("G0_ci"))
    except (TypeError, ValueError):
        return None


# ----------------------------------------------------------------------------------------- log spectra
def _smooth(tau: np.ndarray, H: np.ndarray, width: float | None = None) -> np.ndarray:
    """H convolved with a normalized Gaussian of standard deviation ``width`` in ln τ (renormalized at the ends)."""
    width = SMOOTH if width is None else width
    if not width > 0 or len(tau) < 3:
        return H
    du = float(np.log(tau[1] / tau[0]))
    half = int(math.ceil(4 * width / du))
    k = np.exp(-0.5 * (np.arange(-half, half + 1) * du / width) ** 2)
    num = np.convolve(H, k, mode="same")
    den = np.convolve(np.ones_like(H), k, mode="same")
    return num / den


def _log_spectrum(spectrum: Spectrum, floor: float | None = None) -> tuple[np.ndarray, np.ndarray, float]:
    """Return (u, ℓ, ε): u = ln τ and ℓ = ln(H + ε) on the grid points inside the window."""
    m = spectrum.in_window
    if spectrum.window_empty or int(m.sum()) < 3:
        raise TauspecError("the supported window is empty or has fewer than 3 grid points; nothing to compare",
                           spectrum.source or spectrum.sample)
    H = _smooth(np.asarray(spectrum.tau), np.asarray(spectrum.H))[m]
    if floor is None:
        top = float(np.max(H))
        if not top > 0:
            raise TauspecError("the spectrum is zero throughout its window; nothing to compare",
                               spectrum.source or spectrum.sample)
        floor = LOG_FLOOR * top
    return np.log(np.asarray(spectrum.tau)[m]), np.log(H + floor), floor


# ----------------------------------------------------------------------------------------- replicates
@dataclasses.dataclass(frozen=True, kw_only=True)
class SampleUncertainty:
    """Replicate spectra of one sample and the pointwise uncertainty of ℓ = ln(H + ε) in its window.

    ``replicates`` has shape (R, n_window); ``sigma`` is the standard deviation of ℓ (replicate spread
    smoothed over three neighbours, plus the data noise level as a floor in quadrature).  ``noise`` is the
    relative noise level used to re-noise the fitted moduli.  ``source`` says where σ came from.
    """

    u: np.ndarray
    ell: np.ndarray
    floor: float
    sigma: np.ndarray
    replicates: np.ndarray
    noise: float
    source: str
    dropped: int = 0

    @property
    def floor_level(self) -> float:
        """ℓ = ln 2ε: below it H is under ε."""
        return math.log(2 * self.floor)


def noise_level(spectrum: Spectrum) -> float:
    """Estimate the relative noise of the data from the fit: rms · √(m/(m − p)).

    p is the effective number of parameters of the regularized fit, the trace of its influence matrix on the
    free set (Wahba 1990, *Spline Models for Observational Data*, SIAM, ch. 4: the residual of a linear
    smoother underestimates the noise by √(1 − p/m)).
    """
    from ...spectrum.regularize import TikhonovPath

    s = spectrum.settings or {}
    sweep = _sweep_of(spectrum)
    try:
        pb = build_problem(sweep, np.asarray(spectrum.tau), solvent=bool(s.get("solvent", True)),
                           plateau=bool(s.get("plateau", False)), eta_s=s.get("eta_s_known"))
        path = TikhonovPath(pb.A, pb.b, pb.L)
        x, free, _ = path.solve(float(spectrum.strength))
        p = path.dof(float(spectrum.strength), free)
    except (ValueError, np.linalg.LinAlgError):
        p = 0.0
    m = 2 * len(sweep.omega)
    return float(spectrum.residual_rms) * math.sqrt(m / max(m - p, 1.0))


def _sweep_of(spectrum: Spectrum, storage: np.ndarray | None = None, loss: np.ndarray | None = None) -> Sweep:
    return Sweep(omega=spectrum.omega, storage=spectrum.storage if storage is None else storage,
                 loss=spectrum.loss if loss is None else loss, name=spectrum.sample, meta=dict(spectrum.meta),
                 source=spectrum.source)


def _replicate_settings(spectrum: Spectrum) -> dict[str, Any]:
    """The settings of ``invert`` that reproduce ``spectrum`` on its own grid."""
    s = spectrum.settings or {}
    strength = s.get("strength", "auto")
    out: dict[str, Any] = {
        "strength": strength if strength == "auto" else float(strength),
        "select": s.get("select", spectrum.select if spectrum.select in ("lcurve", "gcv") else "lcurve"),
        "grid": np.asarray(spectrum.tau),
        "solvent": bool(s.get("solvent", True)),
        "plateau": bool(s.get("plateau", False)),
        "eta_s": s.get("eta_s_known"),
    }
    if s.get("bounds"):
        out["bounds"] = {k: tuple(v) for k, v in s["bounds"].items()}
    if s.get("n_strengths"):
        out["n_strengths"] = int(s["n_strengths"])
    return out


def _replicate_H(sweep: Sweep, settings: Mapping[str, Any]) -> tuple[np.ndarray, float]:
    """Return H of one replicate and its strength.

    At a fixed strength without bounds: one solve on the fast exact path of the problem
    :func:`~tauspec.spectrum.invert` forms; otherwise ``invert`` itself.
    """
    strength = settings["strength"]
    if strength != "auto" and not settings.get("bounds"):
        from ...spectrum.regularize import TikhonovPath

        pb = build_problem(sweep, settings["grid"], solvent=settings["solvent"], plateau=settings["plateau"],
                           eta_s=settings["eta_s"])
        x = TikhonovPath(pb.A, pb.b, pb.L).solve(float(strength))[0]
        return (x * pb.scale)[: pb.n_grid], float(strength)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", WeakResultWarning)
        rep = invert(sweep, **settings)
    return np.asarray(rep.H), float(rep.strength)


def _data_seed(spectrum: Spectrum, seed: int) -> np.random.Generator:
    """A generator seeded by ``seed`` and the data themselves, so results do not depend on the order of samples."""
    key = zlib.crc32(np.ascontiguousarray(np.concatenate([spectrum.omega, spectrum.storage, spectrum.loss])).data)
    return np.random.default_rng([int(seed), key])


def _spread(reps: np.ndarray) -> np.ndarray:
    """Variance of ℓ across replicates at each grid point, smoothed by a three-point mean."""
    var = np.var(reps, axis=0, ddof=1)
    return np.convolve(np.pad(var, 1, mode="edge"), np.ones(3) / 3, mode="valid")


def sample_uncertainty(spectrum: Spectrum, *, replicates: int = N_REPLICATES, seed: int = 0,
                       band: tuple[np.ndarray, np.ndarray] | None = None,
                       reselect: bool = True) -> SampleUncertainty:
    """Replicate spectra of one sample by parametric resampling.

    Each replicate is ``invert`` (same settings, same grid) of the fitted moduli multiplied by
    (1 + σ_n ε), ε standard normal, σ_n = :func:`noise_level` (Efron & Tibshirani 1993, ch. 6).  The
    uncertainty of ℓ = ln(H + ε) is the replicate standard deviation, smoothed by a three-point mean of the
    variance, with σ_n added in quadrature as a floor.  A ``band`` of H on the grid — a pair (lo, hi) read as a
    95 % interval, or an object with ``H_lo``, ``H_hi`` and ``level`` — replaces the replicate spread in σ
    (the replicates are still made: they give the null distribution of the shape distance).
    """
    if replicates < 0:
        raise SettingsError(f"replicates must be 0 or more, not {replicates}")
    u, ell, floor = _log_spectrum(spectrum)
    noise = noise_level(spectrum)
    rng = _data_seed(spectrum, seed)
    settings = _replicate_settings(spectrum)
    if not reselect:
        settings["strength"] = float(spectrum.strength)
    m = spectrum.in_window
    reps = np.empty((replicates, len(u)))
    lams = np.empty(replicates)
    for i in range(replicates):
        f_s = np.maximum(1.0 + noise * rng.standard_normal(len(spectrum.omega)), 1e-3)
        f_l = np.maximum(1.0 + noise * rng.standard_normal(len(spectrum.omega)), 1e-3)
        sw = _sweep_of(spectrum, spectrum.storage_fit * f_s, spectrum.loss_fit * f_l)
        H, lams[i] = _replicate_H(sw, settings)
        reps[i] = np.log(_smooth(np.asarray(spectrum.tau), H)[m] + floor)
    dropped = 0
    if reselect and replicates >= 3:
        # A replicate whose strength is more than a decade from the median of the replicates took another
        # corner of the L-curve (typically the collapsed, unregularized end): it is not noise of this spectrum.
        keep = np.abs(np.log10(lams / np.median(lams))) <= STRENGTH_DECADES
        dropped = int(np.sum(~keep))
        reps = reps[keep]
    floor_var = noise**2
    if band is not None:
        level = float(getattr(band, "level", 0.95))
        pair = (band.H_lo, band.H_hi) if hasattr(band, "H_lo") else band
        lo, hi = (np.asarray(b, dtype=float)[m] for b in pair)
        z = stats.norm.ppf(0.5 + level / 2)
        var = ((np.log(hi + floor) - np.log(np.maximum(lo, 0) + floor)) / (2 * z)) ** 2
        source = "band"
    elif len(reps) >= 2:
        var = _spread(reps)
        source = f"{len(reps)} replicates" + (f" ({dropped} dropped: strength a decade off)" if dropped else "")
    else:
        var = np.zeros(len(u))
        source = "data noise only"
    return SampleUncertainty(u=u, ell=ell, floor=floor, sigma=np.sqrt(var + floor_var), replicates=reps,
                             noise=noise, source=source, dropped=dropped)


# ----------------------------------------------------------------------------------------- the shift fit
@dataclasses.dataclass(frozen=True)
class ShiftFit:
    """The result of :func:`fit_shift`: ln a, ln b, the shape distance D² and the overlap used."""

    log_a: float
    log_b: float
    distance2: float
    rms: float
    n: int
    overlap: tuple[float, float]
    at_edge: bool = False


def _residuals(alphas: np.ndarray, uA, lA, vA, uB, lB, vB, need: float, floors: tuple[float, float]):
    """For each α: D², β, the unweighted rms, the number of points and the overlap (lo, hi) in u.

    D² is NaN where the overlap is shorter than ``need`` or has fewer than 3 informative points.  Points
    where both ℓ values lie at their floor (H below ε in both spectra) carry no shape and are left out.
    """
    tol = 1e-9
    lo = np.maximum(uA[0] + alphas, uB[0])
    hi = np.minimum(uA[-1] + alphas, uB[-1])
    x = uB[None, :] - alphas[:, None]
    lA_x = np.interp(x.ravel(), uA, lA).reshape(x.shape)
    m = (uB[None, :] >= lo[:, None] - tol) & (uB[None, :] <= hi[:, None] + tol)
    m &= ~((lB[None, :] <= floors[1]) & (lA_x <= floors[0]))
    r = lB[None, :] - lA_x
    w = np.where(m, 1.0 / (vB[None, :] + np.interp(x.ravel(), uA, vA).reshape(x.shape)), 0.0)
    cnt = m.sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        beta = (w * r).sum(axis=1) / w.sum(axis=1)
        e = np.where(m, r - beta[:, None], 0.0)
        d2 = (w * e * e).sum(axis=1) / cnt
        rms = np.sqrt((e * e).sum(axis=1) / cnt)
    d2 = np.where((hi - lo >= need - tol) & (cnt >= 3), d2, np.nan)
    return d2, beta, rms, cnt, lo, hi


def fit_shift(uA: np.ndarray, lA: np.ndarray, sA: np.ndarray, uB: np.ndarray, lB: np.ndarray, sB: np.ndarray,
              *, min_overlap: float = MIN_OVERLAP,
              floors: tuple[float, float] | None = None) -> ShiftFit | None:
    """Fit ℓ_B(u) ≈ ln b + ℓ_A(u − ln a) by weighted least squares on the overlap.

    With u = ln τ and ℓ = ln(H + ε) on each sample's window, for a trial α = ln a the residuals
    r_i = ℓ_B(u_i) − ℓ_A(u_i − α) are taken at B's grid points u_i inside both windows (A's shifted by α),
    ℓ_A interpolated linearly in u; the weights are w_i = 1/(σ_B²(u_i) + σ_A²(u_i − α)).  For each α,
    β = ln b is the weighted mean of r, and

        D²(α) = (1/n) Σ w_i (r_i − β)²

    is minimized over α by a grid search (a fifth of the grid spacing) refined by Brent's method.  Shifts
    that leave less than ``min_overlap`` of the narrower window overlapping are not considered.  ``floors``
    (ℓ_A, ℓ_B thresholds, ln 2ε of each) leave out the points where both spectra lie below their ε.

    Returns
    -------
    ShiftFit or None
        None when no shift gives enough overlap.
    """
    vA, vB = np.asarray(sA) ** 2, np.asarray(sB) ** 2
    floors = (-math.inf, -math.inf) if floors is None else floors
    need = min_overlap * min(uA[-1] - uA[0], uB[-1] - uB[0])
    a_lo = uB[0] - uA[-1] + need
    a_hi = uB[-1] - uA[0] - need
    if a_hi < a_lo:
        return None
    du = min(float(np.min(np.diff(uA))), float(np.min(np.diff(uB)))) / 5
    alphas = np.linspace(a_lo, a_hi, max(int(math.ceil((a_hi - a_lo) / du)) + 1, 2))
    d2 = _residuals(alphas, uA, lA, vA, uB, lB, vB, need, floors)[0]
    if not np.any(np.isfinite(d2)):
        return None
    best_alpha = float(alphas[int(np.nanargmin(d2))])
    best_d2 = float(np.nanmin(d2))

    def f(alpha: float) -> float:
        v = float(_residuals(np.array([alpha]), uA, lA, vA, uB, lB, vB, need, floors)[0][0])
        return v if math.isfinite(v) else math.inf

    step = float(alphas[1] - alphas[0]) if len(alphas) > 1 else du
    res = optimize.minimize_scalar(f, bounds=(max(best_alpha - step, a_lo), min(best_alpha + step, a_hi)),
                                   method="bounded", options={"xatol": 1e-6})
    if res.success and math.isfinite(res.fun) and res.fun < best_d2:
        best_alpha = float(res.x)
    d2, beta, rms, cnt, lo, hi = (float(v[0]) for v in
                                  _residuals(np.array([best_alpha]), uA, lA, vA, uB, lB, vB, need, floors))
    edge = min(best_alpha - a_lo, a_hi - best_alpha) <= step / 2
    return ShiftFit(log_a=best_alpha, log_b=beta, distance2=d2, rms=rms, n=int(cnt),
                    overlap=(math.exp(lo), math.exp(hi)), at_edge=bool(edge))


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
@dataclasses.dataclass(frozen=True, kw_only=True)
class PairComparison:
    """Two spectra compared: H_B(τ) ≈ b · H_A(τ/a) and the shape left after the shift.

    ``time_shift`` is a, ``modulus_shift`` is b, each with a 95 % interval from the spread of the shifts
    fitted between replicate pairs.  ``shape_distance`` is D² (the weighted mean square of the ln H residual
    after the shift, in units of its noise variance); ``p_value`` is P(g χ²_h ≥ D²) under the null
    distribution of D² between replicates of the same sample; ``same_shape`` is p ≥ ``level`` (``None`` when
    there are no replicates).  ``shape_rms`` is the unweighted rms of the ln H residual (a typical factor
    e^rms between the shifted spectra).
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
    level: float
    overlap: tuple[float, float]
    n_points: int
    null: Mapping[str, float]
    rouse: Mapping[str, Any] | None = None
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form (keys are a public contract: add, never rename)."""
        return {
            "a": self.a,
            "b": self.b,
            "time_shift": self.time_shift,
            "time_shift_ci": list(self.time_shift_ci),
            "modulus_shift": self.modulus_shift,
            "modulus_shift_ci": list(self.modulus_shift_ci),
            "shape_distance": self.shape_distance,
            "shape_rms": self.shape_rms,
            "p_value": self.p_value,
            "p_value_empirical": self.p_value_empirical,
            "same_shape": self.same_shape,
            "level": self.level,
            "overlap": list(self.overlap),
            "n_points": self.n_points,
            "null": dict(self.null),
            "rouse": None if self.rouse is None else dict(self.rouse),
            "notes": list(self.notes),
        }


@dataclasses.dataclass(frozen=True, kw_only=True)
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

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form."""
        return {
            "response": self.response,
            "measure": self.measure,
            "exponents": dict(self.exponents),
            "intervals": {k: list(v) for k, v in self.intervals.items()},
            "prefactor": self.prefactor,
            "n": self.n,
            "residual_rms": self.residual_rms,
            "expected": dict(self.expected),
        }

    def report(self) -> str:
        """Return one line per exponent."""
        out = []
        for k, v in self.exponents.items():
            lo, hi = self.intervals[k]
            out.append(f"  {self.response} ∝ {k}^{v:.3f}  95% [{lo:.3f}, {hi:.3f}]  ({self.measure}; n = {self.n})")
        out += [f"    expected: {e}" for e in self.expected.values()]
        return "\n".join(out)


@dataclasses.dataclass(frozen=True, kw_only=True)
class Comparison:
    """Several spectra compared pairwise (or against a reference), ranked, and scaled along a series."""

    samples: tuple[Mapping[str, Any], ...]
    pairs: tuple[PairComparison, ...]
    ranking: tuple[int, ...]
    reference: str | None
    series: Mapping[str, PowerLaw]
    settings: Mapping[str, Any]
    spectra: tuple[Spectrum, ...] = ()
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form (keys are a public contract: add, never rename)."""
        return {
            "schema": SCHEMA,
            "samples": [dict(s) for s in self.samples],
            "reference": self.reference,
            "pairs": [p.to_dict() for p in self.pairs],
            "ranking": [{"a": self.pairs[i].a, "b": self.pairs[i].b,
                         "shape_distance": self.pairs[i].shape_distance} for i in self.ranking],
            "series": {k: v.to_dict() for k, v in self.series.items()},
            "settings": dict(self.settings),
            "notes": list(self.notes),
        }

    def report(self) -> str:
        """Return a text summary: the pairs ranked by shape distance, then the series fits."""
        lines = [f"{len(self.samples)} samples compared" + (f" against {self.reference}" if self.reference else
                                                             " pairwise")]
        for i in self.ranking:
            p = self.pairs[i]
            verdict = {True: "same shape", False: "different shape", None: "shape not tested"}[p.same_shape]
            lines.append(
                f"  {p.b} vs {p.a}: a = {_g(p.time_shift)} [{_g(p.time_shift_ci[0])}, {_g(p.time_shift_ci[1])}], "
                f"b = {_g(p.modulus_shift)} [{_g(p.modulus_shift_ci[0])}, {_g(p.modulus_shift_ci[1])}], "
                f"D² = {_g(p.shape_distance)}, p = {_g(p.p_value)}: {verdict}")
            if p.rouse:
                r = p.rouse
                lines.append(f"    Rouse: τ_R ratio {_g(r['tau_R_ratio'])} {_ci(r['tau_R_ratio_ci'])}, "
                             f"G0 ratio {_g(r['G0_ratio'])} {_ci(r['G0_ratio_ci'])}")
            lines += [f"    note: {n}" for n in p.notes]
        for fit in self.series.values():
            lines.append(fit.report())
        lines += [f"  note: {n}" for n in self.notes]
        return "\n".join(lines)


def _g(v: Any) -> str:
    return "n/a" if v is None or not math.isfinite(float(v)) else f"{float(v):.4g}"


def _ci(ci: Sequence[float]) -> str:
    return f"[{_g(ci[0])}, {_g(ci[1])}]"


# ----------------------------------------------------------------------------------------- pairs
def _interval(center: float, values: np.ndarray) -> tuple[float, float]:
    """exp(center ± t·sd) from replicate estimates in logs (parametric bootstrap standard error)."""
    v = values[np.isfinite(values)]
    if len(v) < 2:
        return (math.nan, math.nan)
    half = float(stats.t.ppf(0.5 + CI_LEVEL / 2, len(v) - 1) * np.std(v, ddof=1))
    return (math.exp(center - half), math.exp(center + half))


def _compare_pair(name_a: str, name_b: str, ua: SampleUncertainty, ub: SampleUncertainty, null: np.ndarray,
                  level: float, min_overlap: float) -> PairComparison:
    floors = (ua.floor_level, ub.floor_level)
    fit = fit_shift(ua.u, ua.ell, ua.sigma, ub.u, ub.ell, ub.sigma, min_overlap=min_overlap, floors=floors)
    nan2 = (math.nan, math.nan)
    if fit is None:
        return PairComparison(a=name_a, b=name_b, time_shift=math.nan, time_shift_ci=nan2, modulus_shift=math.nan,
                              modulus_shift_ci=nan2, shape_distance=math.nan, shape_rms=math.nan, p_value=math.nan,
                              p_value_empirical=math.nan, same_shape=None, level=level, overlap=nan2, n_points=0,
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
        same = bool(p >= level)
    else:
        p = p_emp = math.nan
        same = None
        notes.append("too few replicates for the shape test (need at least 3 replicate pairs)")
    if fit.at_edge:
        notes.append(f"the best shift lies at the edge of the admissible range (overlap down to {min_overlap:.0%} of "
                     "the narrower window): either the shapes differ, or the samples are too far apart in τ for these "
                     "windows; a and b are not reliable, and the shape test only covers the shifts allowed")
    return PairComparison(
        a=name_a, b=name_b,
        time_shift=math.exp(fit.log_a), time_shift_ci=_interval(fit.log_a, np.array(la)),
        modulus_shift=math.exp(fit.log_b), modulus_shift_ci=_interval(fit.log_b, np.array(lb)),
        shape_distance=fit.distance2, shape_rms=fit.rms, p_value=p, p_value_empirical=p_emp, same_shape=same,
        level=level, overlap=fit.overlap, n_points=fit.n,
        null={"n": len(null), "mean": float(np.mean(null)) if len(null) else math.nan,
              "var": float(np.var(null, ddof=1)) if len(null) > 1 else math.nan, "scale": g, "dof": h},
        notes=tuple(notes),
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


# ----------------------------------------------------------------------------------------- compare
def _label(spectrum: Spectrum, used: set[str]) -> str:
    base = spectrum.sample or spectrum.source or "sample"
    name, k = base, 2
    while name in used:
        name, k = f"{base} ({k})", k + 1
    used.add(name)
    return name


def compare(
    results: Sequence[Spectrum | Sweep],
    *,
    labels: Sequence[str] | None = None,
    reference: int | str | None = None,
    metadata: Sequence[Mapping[str, float | None]] | None = None,
    replicates: int = N_REPLICATES,
    level: float = LEVEL,
    seed: int = 0,
    diagnose: bool = False,
    diagnoses: Sequence[Any] | None = None,
    bands: Sequence[tuple[np.ndarray, np.ndarray] | None] | None = None,
    invert_settings: Mapping[str, Any] | None = None,
    min_overlap: float = MIN_OVERLAP,
    reselect: bool = True,
) -> Comparison:
    """Compare relaxation spectra: shifts, shape distances and their test, ranking and series scaling.

    Parameters
    ----------
    results : sequence of Spectrum or Sweep
        Two or more samples; sweeps are inverted with ``invert_settings``.
    labels : sequence of str, optional
        Names of the samples (default: the sample names, made unique).
    reference : int or str, optional
        Compare every sample against this one (index or label) instead of all pairs.
    metadata : sequence of mappings, optional
        Per sample ``{"M": .., "c": .., "T": ..}``; missing entries are read from the metadata of the sweep
        (``molecular_weight``, ``concentration``, ``temperature``).
    replicates : int
        Replicate spectra per sample (parametric resampling) for the null distribution of the shape distance
        and the intervals of a and b; 0 skips the test (``same_shape`` is then None).
    level : float
        Level of the shape test.
    seed : int
        Seed of the resampling (combined with each sample's data, so the order of samples does not matter).
    diagnose : bool
        Run the bead-spring diagnosis on every sample (when this installation has it) for the Rouse ratios
        and the series; ``diagnoses`` gives them precomputed instead.
    bands : sequence, optional
        Per sample a band of H on its grid — (lo, hi) read as a 95 % interval, or an object with ``H_lo``,
        ``H_hi`` and ``level`` — used for the weights (None for a sample without one).
    invert_settings : mapping, optional
        Keyword arguments of :func:`tauspec.spectrum.invert` for sweeps.
    min_overlap : float
        Smallest overlap of the windows after the shift, as a fraction of the narrower window.
    reselect : bool
        Re-choose the strength on every replicate by the sample's own rule (the default), dropping replicates
        whose strength lies a decade from the replicates' median; False keeps each sample's own strength
        (see docs/compare.md).

    Returns
    -------
    Comparison

    References
    ----------
    See the module docstring and ``docs/compare.md``.
    """
    if len(results) < 2:
        raise SettingsError(f"compare needs at least two samples, not {len(results)}")
    if not 0 < level < 1:
        raise SettingsError(f"level must lie between 0 and 1, not {level}")
    if not 0 < min_overlap <= 1:
        raise SettingsError(f"min_overlap must lie in (0, 1], not {min_overlap}")
    spectra: list[Spectrum] = []
    for r in results:
        if isinstance(r, Sweep):
            spectra.append(invert(r, **dict(invert_settings or {})))
        elif isinstance(r, Spectrum):
            spectra.append(r)
        else:
            raise SettingsError(f"compare takes Spectrum or Sweep objects, not {type(r).__name__}")
    n = len(spectra)
    used: set[str] = set()
    names = list(labels) if labels is not None else [_label(s, used) for s in spectra]
    if len(names) != n or len(set(names)) != n:
        raise SettingsError("labels must be unique, one per sample")
    ref: int | None = None
    if reference is not None:
        if isinstance(reference, str):
            if reference not in names:
                raise SettingsError(f"reference {reference!r} is not one of the samples {names}")
            ref = names.index(reference)
        else:
            ref = int(reference)
            if not 0 <= ref < n:
                raise SettingsError(f"reference index {ref} out of range")

    meta = [dict(m or {}) for m in metadata] if metadata is not None else [{} for _ in spectra]
    if len(meta) != n:
        raise SettingsError("metadata must have one mapping per sample")
    M, c, T = [], [], []
    for s, md in zip(spectra, meta):
        sw = _sweep_of(s)
        M.append(md.get("M") if md.get("M") is not None else sw.meta_number("molecular_weight"))
        c.append(md.get("c") if md.get("c") is not None else sw.meta_number("concentration"))
        T.append(md.get("T") if md.get("T") is not None else sw.meta_number("temperature", kind="temperature"))

    notes: list[str] = []
    if diagnoses is None and diagnose:
        diagnoses = [diagnose_sweep(_sweep_of(s), spectrum=s) for s in spectra]
    if diagnoses is not None and len(diagnoses) != n:
        raise SettingsError("diagnoses must have one entry per sample")

    band_list = list(bands) if bands is not None else [None] * n
    unc = [sample_uncertainty(s, replicates=replicates, seed=seed, band=b, reselect=reselect)
           for s, b in zip(spectra, band_list)]
    nulls = [_null_distances(u, min_overlap) for u in unc]
    index_pairs = [(ref, j) for j in range(n) if j != ref] if ref is not None else \
        list(itertools.combinations(range(n), 2))
    pairs = []
    for i, j in index_pairs:
        pc = _compare_pair(names[i], names[j], unc[i], unc[j], np.concatenate([nulls[i], nulls[j]]), level,
                           min_overlap)
        if diagnoses is not None:
            pc = dataclasses.replace(pc, rouse=rouse_ratios(diagnoses[i], diagnoses[j]))
        pairs.append(pc)
    ranking = tuple(sorted(range(len(pairs)), key=lambda k: (not math.isfinite(pairs[k].shape_distance),
                                                             pairs[k].shape_distance)))
    series = series_scaling(spectra, M, c, diagnoses=diagnoses)
    samples = []
    for k, (s, u) in enumerate(zip(spectra, unc)):
        d = diagnoses[k] if diagnoses is not None else None
        samples.append({
            "label": names[k], "sample": s.sample, "source": s.source, "window": list(s.window),
            "M": M[k], "c": c[k], "T": T[k], "noise": u.noise, "uncertainty": u.source,
            "tau_w": characteristic_time(s), "G_w": characteristic_modulus(s),
            "verdict": getattr(d, "verdict", None),
            "tau_R": getattr(d, "tau_R", None), "G0": getattr(d, "G0", None),
        })
    settings = {"replicates": replicates, "level": level, "seed": seed, "min_overlap": min_overlap,
                "strength": "re-chosen per replicate" if reselect else "fixed at each sample's own",
                "log_floor": LOG_FLOOR, "ci_level": CI_LEVEL, "mode": "reference" if ref is not None else "all pairs"}
    return Comparison(samples=tuple(samples), pairs=tuple(pairs), ranking=ranking,
                      reference=names[ref] if ref is not None else None, series=series, settings=settings,
                      spectra=tuple(spectra), notes=tuple(notes))
