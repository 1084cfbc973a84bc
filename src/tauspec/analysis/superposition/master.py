"""Time–temperature superposition: a master curve at T_ref from sweeps at several temperatures.

For a thermorheologically simple material every relaxation time changes with
temperature by the same factor a_T, and every modulus by the factor b_T, so

    G'(ω; T) = b_T G'(a_T ω; T_ref),     G''(ω; T) = b_T G''(a_T ω; T_ref)

(Ferry 1980, ch. 11).  :func:`superpose` finds a_T from the data by
overlapping adjacent sweeps, takes b_T = T ρ(T) / (T_ref ρ(T_ref)) (or fits
it), fits the WLF and Arrhenius forms to a_T, checks that the overlaps agree
to within the noise, and returns the master curve as a :class:`Sweep` at
T_ref.  See ``docs/superposition.md`` for the method and the decisions.

References
----------
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, ch. 11.
Williams, M. L., Landel, R. F. & Ferry, J. D. (1955). *J. Am. Chem. Soc.* 77, 3701–3707.
van Gurp, M. & Palmen, J. (1998). Time–temperature superposition for polymeric blends.
*Rheology Bulletin* 67, 5–8.
Craven, P. & Wahba, G. (1979). Smoothing noisy data with spline functions. *Numer. Math.* 31, 377–403.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from ...data.record import field, record
from ...data.sweep import Sweep
from ...errors import SettingsError, TauspecError
from ...models.shift_laws import Z95, ArrheniusFit, WLFFit, compare_fits, fit_arrhenius, fit_wlf
from ...rounding import number
from .check import SuperpositionCheck, superposition_check
from .pairs import PairShift, _celsius, _chain, _Pair, _prepare, _shift_pair

__all__ = ["MISFIT_THRESHOLD", "SuperpositionCheck", "MasterCurve", "sweep_temperatures", "superpose"]


#: Overlap misfit, sqrt(χ²/dof) in units of the sweeps' noise, above which superposition is judged to
#: fail.  Our choice: simple materials gave 0.97–1.07 pooled (single pairs 0.76–1.21) in our simulations
#: and a two-component blend 2.2–2.4, so 1.5 leaves room for an imperfect noise estimate.
MISFIT_THRESHOLD = 1.5



# --------------------------------------------------------------------------- result


@record(schema="tauspec.master/1")
class MasterCurve:
    """A master curve at ``T_ref`` and the shifts that made it.

    Arrays over temperatures follow the order of the sweeps given.
    ``log_aT`` is log10 a_T with standard error ``log_aT_se`` and 95 %
    interval ``aT_ci`` (n × 2, in a_T); ``bT`` the vertical factors with
    ``log_bT_se`` (ln units, zero when b_T came from the density rule);
    ``sweep`` is the master curve itself (ω a_T, G'/b_T, G''/b_T), a
    :class:`~tauspec.data.sweep.Sweep` at T_ref whose ``meta`` records the shifts.

    Attributes
    ----------
    T_ref : float
        Reference temperature, K.
    temperatures : numpy.ndarray
        Sweep temperatures, K.
    pairs : tuple of PairShift
        Adjacent-pair shifts in order of temperature.
    wlf, arrhenius : WLFFit or None, ArrheniusFit
        The fitted shift-factor models (WLF needs three temperatures).
    better_fit : {"wlf", "arrhenius"}
        The model with the lower AIC (``comparison`` says how much lower).
    check : SuperpositionCheck
    noise : numpy.ndarray
        n × 2 estimated relative noise of (G', G'') of each sweep.
    inputs : tuple of Sweep
        The sweeps as given (for plotting; in memory only).
    """

    T_ref: float
    temperatures: np.ndarray
    log_aT: np.ndarray
    log_aT_se: np.ndarray
    aT_ci: np.ndarray
    bT: np.ndarray
    log_bT_se: np.ndarray
    vertical: str
    pairs: tuple[PairShift, ...]
    wlf: WLFFit | None
    arrhenius: ArrheniusFit
    better_fit: str
    comparison: str
    check: SuperpositionCheck
    noise: np.ndarray
    sweep: Sweep
    sources: tuple[str, ...]
    notes: tuple[str, ...]
    inputs: tuple[Sweep, ...] = field(transient=True, default=())

    @property
    def aT(self) -> np.ndarray:
        """Horizontal shift factors a_T."""
        return 10.0**self.log_aT

    @property
    def omega(self) -> np.ndarray:
        """Reduced frequency a_T ω of the master curve, rad/s."""
        return self.sweep.omega

    @property
    def storage(self) -> np.ndarray:
        """Reduced storage modulus G'/b_T, Pa."""
        return self.sweep.storage

    @property
    def loss(self) -> np.ndarray:
        """Reduced loss modulus G''/b_T, Pa."""
        return self.sweep.loss

    def _json_out(self, d: dict[str, Any]) -> dict[str, Any]:
        """The contract form: temperatures in °C (and K), the master curve in SI, its metadata under ``meta``."""
        wlf = self.wlf.to_dict() if self.wlf is not None else {"C1": None, "C2": None}
        return {
            "schema": d["schema"],
            "sample": self.sweep.name,
            "sources": list(self.sources),
            "T_ref": self.T_ref - 273.15,
            "T_ref_K": self.T_ref,
            "temperatures": (self.temperatures - 273.15).tolist(),
            "temperatures_K": self.temperatures.tolist(),
            "aT": self.aT.tolist(),
            "aT_ci": self.aT_ci.tolist(),
            "log_aT": self.log_aT.tolist(),
            "log_aT_se": self.log_aT_se.tolist(),
            "bT": self.bT.tolist(),
            "log_bT_se": self.log_bT_se.tolist(),
            "vertical": self.vertical,
            "wlf": wlf,
            "arrhenius": self.arrhenius.to_dict(),
            "better_fit": self.better_fit,
            "fit_comparison": self.comparison,
            "pairs": [p.to_dict() for p in self.pairs],
            "superposition": self.check.to_dict(),
            "noise": {"storage": self.noise[:, 0].tolist(), "loss": self.noise[:, 1].tolist()},
            "notes": list(self.notes),
            "omega": self.omega.tolist(),
            "storage": self.storage.tolist(),
            "loss": self.loss.tolist(),
            "meta": dict(self.sweep.meta),
            "source": self.sweep.source,
        }

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        wlf = d.get("wlf") or {}
        noise = d.get("noise") or {}
        return {
            "T_ref": d["T_ref_K"], "temperatures": d["temperatures_K"], "log_aT": d["log_aT"],
            "log_aT_se": d["log_aT_se"], "aT_ci": d["aT_ci"], "bT": d["bT"], "log_bT_se": d["log_bT_se"],
            "vertical": d["vertical"], "pairs": d["pairs"], "wlf": wlf if wlf.get("C1") is not None else None,
            "arrhenius": d["arrhenius"], "better_fit": d["better_fit"], "comparison": d["fit_comparison"],
            "check": d["superposition"],
            "noise": np.column_stack([noise.get("storage", []), noise.get("loss", [])]).tolist(),
            "sweep": {"sample": d.get("sample", "sample"), "source": d.get("source", ""), "meta": d.get("meta") or {},
                      "omega": d["omega"], "storage": d["storage"], "loss": d["loss"]},
            "sources": d.get("sources") or [], "notes": d.get("notes") or [],
        }

    def report(self) -> str:
        """Return a plain-text summary."""
        lines = [f"master curve of {self.sweep.name} at T_ref = {_celsius(self.T_ref)} "
                 f"({len(self.sweep)} points, {number(self.sweep.omega[0])}–{number(self.sweep.omega[-1])} rad/s, "
                 f"{self.sweep.decades:.1f} decades)"]
        lines.append("  T [C]     a_T          95% interval              b_T")
        for i in np.argsort(self.temperatures):
            lo, hi = self.aT_ci[i]
            lines.append(f"  {self.temperatures[i] - 273.15:7.2f}  {self.aT[i]:11.4g}  [{lo:10.4g}, {hi:10.4g}]  "
                         f"{self.bT[i]:8.4f}")
        if self.wlf is not None:
            w = self.wlf
            lines.append(f"  WLF at {_celsius(w.T_ref)}: C1 = {w.C1:.4g}, 95% interval [{w.C1_ci[0]:.4g}, "
                         f"{w.C1_ci[1]:.4g}]; C2 = {w.C2:.4g} K, 95% interval [{w.C2_ci[0]:.4g}, {w.C2_ci[1]:.4g}] K"
                         + (" (C2 at the edge of its range)" if w.at_bound else ""))
        a = self.arrhenius
        lines.append(f"  Arrhenius: E_a = {a.Ea / 1e3:.4g} kJ/mol, 95% interval [{a.Ea_ci[0] / 1e3:.4g}, "
                     f"{a.Ea_ci[1] / 1e3:.4g}] kJ/mol")
        lines.append(f"  {self.comparison}")
        lines.append(f"  {self.check.statement}")
        lines.extend(f"  note: {n}" for n in self.notes)
        return "\n".join(lines)


# --------------------------------------------------------------------------- the public function


def sweep_temperatures(sweeps: Sequence[Sweep], temperatures: Sequence[float] | None = None) -> np.ndarray:
    """Return the temperature of each sweep in K: ``temperatures`` if given, else ``# temperature:`` metadata.

    Raises
    ------
    TauspecError
        When a sweep has no temperature, or the count of ``temperatures`` is wrong.
    """
    if temperatures is not None:
        T = np.asarray(temperatures, dtype=float).reshape(-1)
        if len(T) != len(sweeps):
            raise SettingsError(f"{len(T)} temperatures given for {len(sweeps)} sweeps")
        return T
    out = []
    for s in sweeps:
        t = s.meta_number("temperature", kind="temperature")
        if t is None:
            raise TauspecError("no temperature: add a line '# temperature: 130 C' or give the temperatures",
                               s.source or s.name)
        out.append(t)
    return np.asarray(out, dtype=float)


def _validate(sweeps, T, T_ref, vertical, density, min_overlap, threshold) -> np.ndarray:
    if len(sweeps) < 2:
        raise SettingsError("superposition needs sweeps at two or more temperatures")
    for s in sweeps:
        if not isinstance(s, Sweep):
            raise SettingsError(f"expected Sweep objects, got {type(s).__name__}")
    for s, t in zip(sweeps, T):
        if not (math.isfinite(t) and t > 0):
            raise TauspecError(f"temperature {t:g} K is not a positive absolute temperature", s.source or s.name)
    order = np.argsort(T, kind="stable")
    Ts = T[order]
    same = np.flatnonzero(np.diff(Ts) <= 1e-9)
    if same.size:
        a, b = sweeps[order[same[0]]], sweeps[order[same[0] + 1]]
        raise TauspecError(f"two sweeps at the same temperature {_celsius(Ts[same[0]])}: "
                           f"{a.source or a.name} and {b.source or b.name}; keep one")
    if not math.isfinite(T_ref) or T_ref < Ts[0] - 1e-9 or T_ref > Ts[-1] + 1e-9:
        raise SettingsError(f"reference temperature {_celsius(T_ref)} is outside the measured range "
                            f"{_celsius(Ts[0])} to {_celsius(Ts[-1])}; shift factors are not extrapolated")
    if vertical not in ("density", "fit"):
        raise SettingsError(f"vertical must be 'density' or 'fit', not {vertical!r}")
    if vertical == "fit" and density is not None:
        raise SettingsError("give density only with vertical='density'")
    if not (min_overlap > 0 and math.isfinite(min_overlap)):
        raise SettingsError(f"min_overlap must be a positive number of decades, not {min_overlap!r}")
    if not (threshold > 0 and math.isfinite(threshold)):
        raise SettingsError(f"threshold must be positive, not {threshold!r}")
    return order


def _density_factors(T: np.ndarray, T_ref: float, density: Callable[[float], float] | None) -> np.ndarray:
    """b_T = T ρ(T) / (T_ref ρ(T_ref)) (Ferry 1980, ch. 11); constant ρ when ``density`` is None."""
    if density is None:
        return T / T_ref
    rho = np.array([float(density(float(t))) for t in T])
    rho_ref = float(density(float(T_ref)))
    if not (np.all(np.isfinite(rho)) and np.all(rho > 0) and math.isfinite(rho_ref) and rho_ref > 0):
        raise SettingsError("density(T) must return positive finite values over the temperature range")
    return T * rho / (T_ref * rho_ref)


def _reference_position(Ts: np.ndarray, T_ref: float) -> tuple[int, bool]:
    """Return (lo, exact): T_ref equals Ts[lo] (exact) or lies between Ts[lo] and Ts[lo + 1]."""
    hit = np.flatnonzero(np.abs(Ts - T_ref) <= 1e-9)
    if hit.size:
        return int(hit[0]), True
    return int(np.searchsorted(Ts, T_ref) - 1), False


def superpose(
    sweeps: Sequence[Sweep],
    *,
    T_ref: float,
    temperatures: Sequence[float] | None = None,
    vertical: str = "density",
    density: Callable[[float], float] | None = None,
    min_overlap: float = 0.2,
    threshold: float = MISFIT_THRESHOLD,
) -> MasterCurve:
    """Superpose sweeps at several temperatures into a master curve at ``T_ref``.

    Reduced variables (Ferry 1980, ch. 11)::

        ω_r = a_T ω,   G'_r = G'(ω; T) / b_T,   G''_r = G''(ω; T) / b_T,   b_T = T ρ(T) / (T_ref ρ(T_ref))

    Adjacent sweeps (in temperature) are overlapped: the shift d = log10 of
    the ratio of their a_T minimizes first the mean squared difference of
    ln tan δ (independent of b_T) between each sweep's points and the other
    sweep's smooth fit, then that of ln G' and ln G'' (with ln b_T fixed, or
    fitted as a common offset when ``vertical="fit"``).  The pairwise shifts
    are chained to T_ref; when T_ref lies between two sweep temperatures the
    step between them is split in the proportion the fitted WLF equation
    gives (Arrhenius with only two temperatures).  WLF and Arrhenius are
    fitted to the pairwise shifts (see :mod:`tauspec.models.shift_laws`).

    Parameters
    ----------
    sweeps : sequence of Sweep
        Two or more sweeps of one material at distinct temperatures.
    T_ref : float
        Reference temperature, K, inside the measured range.
    temperatures : sequence of float, optional
        Temperature of each sweep, K; default: each sweep's ``temperature`` metadata.
    vertical : {"density", "fit"}
        b_T from the density rule (default), or fitted from the overlaps of ln G' and ln G''.
    density : callable, optional
        ρ(T) with T in K (any unit: only ratios enter); default constant.
    min_overlap : float
        Smallest overlap of two adjacent sweeps, decades of ω.
    threshold : float
        Overlap misfit (× noise) above which superposition is reported as failing.

    Returns
    -------
    MasterCurve

    Raises
    ------
    TauspecError
        For sweeps without temperature, equal temperatures, or adjacent
        sweeps that cannot be overlapped; SettingsError for bad options.

    Warns
    -----
    WeakResultWarning
        When the overlaps disagree by more than the noise allows
        (thermorheologically complex material: a blend, near T_g, a gel).

    References
    ----------
    Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., ch. 11.
    Williams, M. L., Landel, R. F. & Ferry, J. D. (1955). *J. Am. Chem. Soc.* 77, 3701–3707.
    """
    sweeps = list(sweeps)
    T = sweep_temperatures(sweeps, temperatures)
    T_ref = float(T_ref)
    order = _validate(sweeps, T, T_ref, vertical, density, min_overlap, threshold)
    Ts = T[order]
    n = len(sweeps)
    curves = [_prepare(sweeps[i], float(T[i]), int(i)) for i in order]
    b_rule = _density_factors(Ts, T_ref, density if vertical == "density" else None)
    log_b_rule = np.log(b_rule)

    pairs: list[PairShift] = []
    for k in range(n - 1):
        v_rule = float(log_b_rule[k + 1] - log_b_rule[k])
        pairs.append(_shift_pair(_Pair(curves[k], curves[k + 1]), v_rule if vertical == "density" else None,
                                 v_rule, min_overlap))
    d = np.array([p.log_shift for p in pairs])
    se = np.array([p.se for p in pairs])
    se_fit = np.where(np.isfinite(se) & (se > 0), se, 1.0)

    wlf = fit_wlf(Ts, d, np.maximum(se_fit, 1e-6), T_ref=T_ref)
    arr = fit_arrhenius(Ts, d, np.maximum(se_fit, 1e-6), T_ref=T_ref)
    better, comparison = compare_fits(wlf, arr)

    notes: list[str] = []
    lo, f, exact = _reference_fraction(Ts, T_ref, wlf, arr, notes)
    log_a_sorted, var_a = _chain(d, se**2, lo, f)

    if vertical == "fit":
        v = np.array([p.log_vertical for p in pairs])
        vse = np.array([p.vertical_se for p in pairs])
        fb = f if exact else (T_ref - Ts[lo]) / (Ts[lo + 1] - Ts[lo])
        if not exact:
            notes.append("b_T at T_ref is interpolated linearly in T between the neighbouring sweeps")
        log_b_sorted, var_b = _chain(v, vse**2, lo, fb)
    else:
        log_b_sorted, var_b = log_b_rule, np.zeros(n)

    inv = np.empty(n, dtype=int)
    inv[order] = np.arange(n)
    log_aT = log_a_sorted[inv]
    log_aT_se = np.sqrt(var_a)[inv]
    half = Z95 * log_aT_se
    aT_ci = np.column_stack([10.0 ** (log_aT - half), 10.0 ** (log_aT + half)])
    bT = np.exp(log_b_sorted)[inv]
    log_bT_se = np.sqrt(var_b)[inv]
    check = superposition_check(pairs, threshold)

    sources = tuple(s.source or s.name for s in sweeps)
    master = _master_sweep(sweeps, T, T_ref, log_aT, bT, sources, wlf, arr, check, vertical)
    noise = np.array([[c.sp, c.spp] for c in sorted(curves, key=lambda c: c.index)])
    return MasterCurve(
        T_ref=T_ref,
        temperatures=T.copy(),
        log_aT=log_aT,
        log_aT_se=log_aT_se,
        aT_ci=aT_ci,
        bT=bT,
        log_bT_se=log_bT_se,
        vertical=vertical,
        pairs=tuple(pairs),
        wlf=wlf,
        arrhenius=arr,
        better_fit=better,
        comparison=comparison,
        check=check,
        noise=noise,
        sweep=master,
        sources=sources,
        notes=tuple(notes),
        inputs=tuple(sweeps),
    )


def _reference_fraction(Ts: np.ndarray, T_ref: float, wlf: WLFFit | None, arr: ArrheniusFit,
                        notes: list[str]) -> tuple[int, float, bool]:
    """Where T_ref lies among the sorted temperatures: (index below, fraction of the way to the next, exact?).

    Between two sweep temperatures the fraction follows the fitted shift law (WLF unless it ran into its bound,
    else Arrhenius), so that log a_T(T_ref) = 0 on the fitted curve; a note says so.
    """
    n = len(Ts)
    lo, exact = _reference_position(Ts, T_ref)
    f = 0.0
    if not exact:
        model = wlf if wlf is not None and not wlf.at_bound else arr
        m_lo, m_hi = (float(v) for v in model.log_aT([Ts[lo], Ts[lo + 1]]))
        f = -m_lo / (m_hi - m_lo) if m_hi != m_lo else (T_ref - Ts[lo]) / (Ts[lo + 1] - Ts[lo])
        f = min(max(f, 0.0), 1.0)
        name = "WLF" if model is wlf else "Arrhenius"
        notes.append(f"T_ref {_celsius(T_ref)} is not a sweep temperature: log a_T there is interpolated between "
                     f"{_celsius(Ts[lo])} and {_celsius(Ts[lo + 1])} with the fitted {name} equation")
    elif lo == n - 1:
        lo, f = n - 2, 1.0
    return lo, f, exact


def _master_sweep(sweeps, T, T_ref, log_aT, bT, sources, wlf, arr, check, vertical) -> Sweep:
    """Shift every point and merge the sweeps into one Sweep at T_ref, with the shifts in ``meta``."""
    omega = np.concatenate([s.omega * 10.0**la for s, la in zip(sweeps, log_aT)])
    storage = np.concatenate([s.storage / b for s, b in zip(sweeps, bT)])
    loss = np.concatenate([s.loss / b for s, b in zip(sweeps, bT)])
    order = np.argsort(omega, kind="stable")
    omega, storage, loss = omega[order], storage[order], loss[order]
    # Points that land on the same reduced frequency (to 1e-12) are merged by their geometric mean.
    key = np.concatenate([[True], np.diff(np.log(omega)) > 1e-12])
    group = np.cumsum(key) - 1
    count = np.bincount(group)
    omega = np.exp(np.bincount(group, np.log(omega)) / count)
    storage = np.exp(np.bincount(group, np.log(storage)) / count)
    loss = np.exp(np.bincount(group, np.log(loss)) / count)
    names = {s.name for s in sweeps}
    name = sweeps[0].name if len(names) == 1 else " + ".join(dict.fromkeys(s.name for s in sweeps))
    temps = "; ".join(_celsius(t) for t in T)
    meta = {
        "sample": name,
        "temperature": _celsius(T_ref),
        "master_curve": f"{len(sweeps)} sweeps superposed at {_celsius(T_ref)}",
        "sweep_temperatures": temps,
        "shift_aT": "; ".join(f"{_celsius(t)}={10.0**la:.6g}" for t, la in zip(T, log_aT)),
        "shift_bT": "; ".join(f"{_celsius(t)}={b:.6g}" for t, b in zip(T, bT)),
        "vertical_shift": "density rule" if vertical == "density" else "fitted",
        "wlf": (f"C1={wlf.C1:.6g}; C2={wlf.C2:.6g} K" if wlf is not None else "not fitted"),
        "arrhenius": f"Ea={arr.Ea:.6g} J/mol",
        "superposition_check": f"{'holds' if check.simple else 'fails'} (misfit {check.misfit:.3g} x noise)",
        "sources": "; ".join(sources),
    }
    return Sweep(omega=omega, storage=storage, loss=loss, name=name, meta=meta, source="")
