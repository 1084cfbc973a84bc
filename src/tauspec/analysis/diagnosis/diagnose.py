"""Does the unentangled bead-spring (Rouse) description hold?  The evidence and the verdict.

:func:`diagnose` fits the bead-spring models of :mod:`tauspec.models.beadspring` to a sweep, computes the data-level
signatures of :mod:`tauspec.models.signatures` and the tests on the recovered spectrum, and decides one verdict by
the rule documented in ``docs/diagnosis.md`` (and in :func:`decide`):

    rouse | zimm | entangled | gel | other | inconclusive

References
----------
Rouse, P. E. (1953). J. Chem. Phys. 21, 1272.  Zimm, B. H. (1956). J. Chem. Phys. 24, 269.
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., ch. 9 and 13.
Winter, H. H. & Chambon, F. (1986). J. Rheol. 30, 367.
Baumgaertel, M., Schausberger, A. & Winter, H. H. (1990). Rheol. Acta 29, 400.
Jakeš, J. (1995). Collect. Czech. Chem. Commun. 60, 1815.
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from ...data.record import field, record, resolve_options
from ...data.sweep import Sweep
from ...data.units import density_kg_m3, molar_mass_g_mol
from ...errors import DroppedPointsWarning, SettingsError, SweepError, TauspecError, WeakResultWarning
from ...models import signatures as sg
from ...models.beadspring import ROUSE_MODELS, ZIMM_MODELS, fit_all
from ...models.bounds import checked_interval
from ...models.chainfit import BeadSpringFit
from ...models.chains import FORM_NAMES
from ...models.intervals import add_intervals, jacobian_intervals
from ...rounding import number
from ...spectrum.threads import limited
from .describe import describability_evidence
from .entanglement import Entanglement, analyse_entanglement, bsw_estimate, mass_intervals
from .evidence import THRESHOLDS, Evidence, _fmt_value, _g, _gather, best_model, entanglement_evidence
from .options import DiagnoseOptions
from .verdict import _STATEMENTS, decide

__all__ = ["Diagnosis", "diagnose", "rouse_form_preference"]

#: The entangled-melt keys of the JSON form (issue 16), derived from ``Diagnosis.entanglement``.
_FLAT = ("GN0", "GN0_ci", "GN0_method", "tau_d", "tau_d_ci", "Me", "Z", "Me_ci", "Z_ci")


@record(schema="tauspec.diagnosis/1")
class Diagnosis:
    """The bead-spring diagnosis of one sweep.

    ``tau_R`` (s) and ``G0`` (Pa) are τ_1 and the mode modulus of the reported bead-spring fit
    (``reported_model``), with 95 % intervals; ``alpha`` is the mode exponent a of whichever general form
    (finite-N sine or truncated power law, ``alpha_form``) fits better, with its interval.  ``modes_g`` and
    ``modes_tau`` are the sparse discrete spectrum (JSON: ``modes``).  The data (``omega``, ``storage``,
    ``loss``), the spectrum used and the options are kept in memory for figures, not in the JSON form.
    ``rouse_form`` is the Rouse form the data prefer ("discrete" or "continuum") and ``rouse_form_delta_bic``
    by how much.  For an entangled sample ``entanglement`` holds the plateau modulus G_N⁰ (several estimators),
    the terminal time τ_d, M_e and Z; the JSON form also carries them flat (``GN0``, ``GN0_ci``, ``GN0_method``,
    ``tau_d``, ``tau_d_ci``, ``Me``, ``Z``, ``Me_ci``, ``Z_ci``; null for other verdicts).  ``noise`` is the
    relative noise of the data from their own roughness.
    """

    sample: str
    source: str
    verdict: str
    statement: str
    reason: str
    tau_R: float
    tau_R_ci: tuple[float, float]
    G0: float
    G0_ci: tuple[float, float]
    N: float
    eta_s: float
    alpha: float
    alpha_ci: tuple[float, float]
    alpha_form: str
    reported_model: str
    ci_method: str
    evidence: tuple[Evidence, ...]
    fits: Mapping[str, BeadSpringFit]
    modes_g: np.ndarray
    modes_tau: np.ndarray
    spectrum_used: bool = False
    notes: tuple[str, ...] = ()
    rouse_form: str = ""
    rouse_form_delta_bic: float = math.nan
    entanglement: Entanglement | None = None
    noise: float = math.nan
    omega: np.ndarray = field(transient=True, default=None)
    storage: np.ndarray = field(transient=True, default=None)
    loss: np.ndarray = field(transient=True, default=None)
    spectrum: Any = field(transient=True, default=None)
    options: DiagnoseOptions = field(transient=True, default_factory=DiagnoseOptions)

    def evidence_by_name(self) -> dict[str, Evidence]:
        """Return the evidence keyed by test name."""
        return {e.test: e for e in self.evidence}

    def _json_out(self, d: dict[str, Any]) -> dict[str, Any]:
        out: dict[str, Any] = {}
        for k, v in d.items():
            if k == "modes_g":
                out["modes"] = {"g": v, "tau": d["modes_tau"],
                                "method": "unregularized NNLS on a fine grid (Jakes 1995)"}
            elif k == "entanglement":
                out.update(self._entanglement_keys())
                out[k] = v
            elif k != "modes_tau":
                out[k] = v
        return out

    def _entanglement_keys(self) -> dict[str, Any]:
        """The entangled-melt numbers as top-level keys (issue 16), null unless the verdict is entangled."""
        e = self.entanglement
        if e is None:
            return {k: None for k in _FLAT}
        return {"GN0": e.GN0, "GN0_ci": list(e.GN0_ci), "GN0_method": e.GN0_method or None, "tau_d": e.tau_d,
                "tau_d_ci": list(e.tau_d_ci), "Me": e.Me, "Z": e.Z, "Me_ci": list(e.Me_ci), "Z_ci": list(e.Z_ci)}

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        modes = d.pop("modes", None) or {}
        d["modes_g"], d["modes_tau"] = modes.get("g", []), modes.get("tau", [])
        for k in _FLAT:  # derived from ``entanglement``
            d.pop(k, None)
        return d

    def report(self) -> str:
        """Return a plain-text report: verdict, parameters, fit statistics and every test."""
        lines = [f"{self.sample}: {self.verdict.upper()}", f"  {self.statement}"]
        if self.reason:
            lines.append(f"  reason: {self.reason}")
        if self.entanglement is not None:
            lines.extend(_entanglement_lines(self.entanglement))
        if self.verdict == "entangled":
            # τ_R and G0 mean nothing for an entangled sample: the text shows G_N0, τ_d, M_e and Z instead (the
            # best bead-spring fit stays in the JSON and in the table below)
            lines.append(f"  best bead-spring fit: {self.reported_model} (not a description of this sample)")
        else:
            lines.append(f"  reported fit: {self.reported_model}   (intervals: {self.ci_method})")
            if self.rouse_form:
                lines.append(f"  Rouse form preferred: {self.rouse_form} (BIC lower by "
                             f"{_g(self.rouse_form_delta_bic)}; {_bic_strength(self.rouse_form_delta_bic)})")
            lines.append(f"  tau_R = {_g(self.tau_R)} s   {_ci_text(self.tau_R_ci)}")
            lines.append(f"  G0    = {_g(self.G0)} Pa  {_ci_text(self.G0_ci)}")
            lines.append(f"  N     = {self.N:.1f}    eta_s = {_g(self.eta_s)} Pa s")
        lines.append(f"  alpha = {self.alpha:.3f}  {_ci_text(self.alpha_ci)}  ({self.alpha_form} form)")
        lines.append("  fits:   model           rms      red.chi2     AIC       BIC")
        for name, f in self.fits.items():
            lines.append(f"          {name:14s} {f.rms:7.4f}  {f.reduced_chi2:9.3g}  {f.aic:8.1f}  {f.bic:8.1f}")
        lines.append("  evidence:")
        for e in self.evidence:
            mark = {True: "pass", False: "FAIL", None: " -- "}[e.passed]
            lines.append(f"    [{mark}] {e.test}: {_fmt_value(e.value)} (expected {e.expected})"
                         + (f"; {e.note}" if e.note else ""))
        for n in self.notes:
            lines.append(f"  note: {n}")
        return "\n".join(lines)


def _ci_text(ci: Sequence[float]) -> str:
    if not all(isinstance(c, float | int) and math.isfinite(c) for c in ci):
        return "interval not available"
    return f"95% [{_g(ci[0])}, {_g(ci[1])}]"


def _entanglement_lines(e: Entanglement) -> list[str]:
    """The entangled-melt numbers of the text report (instead of tau_R and G0)."""
    lines = [f"  G_N0  = {_g(e.GN0)} Pa  {_ci_text(e.GN0_ci)}  ({e.GN0_method or 'no estimator applies'})"]
    for x in e.estimates:
        if x.method != e.GN0_method:
            lines.append(f"          also {x.method}: {_g(x.value)} Pa  {_ci_text(x.ci)}  ({x.source})")
    lines.append(f"  tau_d = {_g(e.tau_d)} s  {_ci_text(e.tau_d_ci)}  ({e.tau_d_method})")
    if math.isfinite(e.Me):
        lines.append(f"  M_e   = {_g(e.Me)} g/mol  {_ci_text(e.Me_ci)}  ({e.Me_convention})" +
                     (f";  Z = M/M_e = {e.Z:.3g}  {_ci_text(e.Z_ci)}" if math.isfinite(e.Z) else ""))
    else:
        lines.append("  M_e   = n/a (" + ("needs density and temperature in the metadata)" if math.isfinite(e.GN0)
                                         else "no plateau modulus)"))
    lines.extend(f"  note: {n}" for n in e.notes)
    return lines


def _bic_strength(delta: float) -> str:
    """Words for a BIC difference (≈ 2 ln Bayes factor): Kass & Raftery 1995, J. Am. Stat. Assoc. 90:773."""
    if not math.isfinite(delta):
        return "not compared"
    return ("not worth more than a bare mention" if delta < 2 else "positive evidence" if delta < 6
            else "strong evidence" if delta < 10 else "very strong evidence")


def rouse_form_preference(fits: Mapping[str, BeadSpringFit]) -> tuple[str, float]:
    """The Rouse form the data prefer ("discrete" or "continuum") and by how much BIC (≥ 0).

    Both forms have the same parameters (G0, τ_1, N, η_s), so the BIC difference is n ln(χ²_a/χ²_b)
    (Burnham & Anderson 2002, ch. 2); read on the scale of Kass & Raftery 1995.
    """
    a, b = (fits[m] for m in ROUSE_MODELS)
    best, other = (a, b) if a.bic <= b.bic else (b, a)
    return FORM_NAMES[best.form], float(other.bic - best.bic)


@limited
def diagnose(sweep: Sweep, options: DiagnoseOptions | None = None, *, spectrum: Any = None,
             **changes: Any) -> Diagnosis:
    """Decide whether the unentangled bead-spring (Rouse) description holds for one sweep.

    Parameters
    ----------
    sweep : Sweep
        The frequency sweep.
    options : DiagnoseOptions, optional
        Whether to use the spectrum, fit a solvent contribution, compute profile intervals.
    spectrum : Spectrum, optional
        A recovered continuous spectrum; computed with ``tauspec.invert(sweep)`` when omitted and
        ``options.use_spectrum`` is true.
    **changes
        Fields of ``DiagnoseOptions`` given directly (``diagnose(sweep, intervals=False)``).

    Returns
    -------
    Diagnosis
        The verdict, the statement, the reported parameters with intervals, the evidence and every fit.

    Notes
    -----
    Verdict rule: see :func:`decide` and docs/diagnosis.md.  Models: Rouse 1953 (finite-N sine form),
    Zimm 1956 (τ_p = τ_1 p^(−3ν)), the free-exponent family in both forms (Ferry 1980, ch. 9).
    """
    if not isinstance(sweep, Sweep):
        raise SettingsError("diagnose() needs a Sweep")
    opts = resolve_options(DiagnoseOptions, options, changes, "diagnose()")
    use_spectrum, solvent, intervals = opts.use_spectrum, opts.solvent, opts.intervals
    notes: list[str] = []
    sweep, dropped = sweep.restrict(opts.omega_min, opts.omega_max)
    if dropped:
        notes.append(dropped)
        warnings.warn(f"{sweep.source or sweep.name}: {dropped}", DroppedPointsWarning, stacklevel=2)
    spectrum, spectrum_note = _recover_spectrum(sweep, spectrum, use_spectrum)
    w, gp, gpp = sweep.omega, sweep.storage, sweep.loss
    tau_starts: list[float] = []
    free = sg.sparse_modes(w, gp, gpp, solvent=solvent)
    if len(free.tau):
        tau_starts.append(float(free.tau[0]))
    if spectrum is not None:
        tau_starts.append(_longest_time(spectrum))
    fits = fit_all(w, gp, gpp, tau_starts=tau_starts, solvent=solvent)
    gname = min(("general_sine", "general_power"), key=lambda m: fits[m].bic)
    fits = {**fits, gname: jacobian_intervals(fits[gname], w, gp, gpp, solvent=solvent)}
    first, noise = _first_evidence(sweep, spectrum, free, solvent)
    bsw = bsw_estimate(w, gp, gpp, free.reduced_chi2(), free.n_data - free.n_active)
    last = entanglement_evidence(sweep, spectrum, bsw)

    def gather() -> list[Evidence]:
        return first + _gather(sweep, fits, fits[gname], free, spectrum, spectrum_note) + last

    evidence = gather()
    verdict, reason = decide(evidence)
    # The profile intervals are the costly part: compute them where the exponent test decides
    # (the rule reached its bead-spring steps), then decide again with them.
    if intervals and verdict in ("rouse", "zimm", "other", "entangled") and reason.startswith(_REACHED_CHAINS):
        fits = {**fits, gname: add_intervals(fits[gname], w, gp, gpp, solvent=solvent, params=("a",))}
        evidence = gather()
        verdict, reason = decide(evidence)
    general = fits[gname]
    reported, rep = _reported_fit(fits, verdict, (w, gp, gpp), solvent, intervals)
    fits = {**fits, reported: rep}
    ent = None
    if verdict == "entangled":
        ent = analyse_entanglement(w, gp, gpp, noise=noise, spectrum=spectrum, free_reduced_chi2=free.reduced_chi2(),
                                   free_dof=free.n_data - free.n_active, meta=_entanglement_meta(sweep), bsw=bsw)
        ent, more = _checked_entanglement(ent)
        notes.extend(more)
    notes.extend(_fit_notes(verdict, rep, general, reported, w, intervals))
    if verdict in ("rouse", "zimm"):
        notes.extend(_signature_of_the_chain(evidence, rep, w))
    (tau_ci, G0_ci, a_ci), more = _checked_fit_intervals(rep, general, w)
    notes.extend(more)
    form, dbic = rouse_form_preference(fits)
    statement = _STATEMENTS[verdict].format(
        tau=_g(rep.tau1), G0=_g(rep.G0), alpha=f"{general.a:.2f}", reason=reason, form=FORM_NAMES[rep.form],
        why=_form_reason(fits, verdict), GN0=_g(ent.GN0) if ent else "n/a",
        GN0_method=(ent.GN0_method.replace("_", " ").replace("bsw", "BSW") if ent and ent.GN0_method
                    else "no estimator applies"),
        tau_d=_g(ent.tau_d) if ent else "n/a")
    return Diagnosis(
        verdict=verdict, statement=statement, reason=reason, sample=sweep.name, source=sweep.source,
        tau_R=rep.tau1, tau_R_ci=tau_ci, G0=rep.G0, G0_ci=G0_ci, N=rep.N, eta_s=rep.eta_s,
        alpha=general.a, alpha_ci=a_ci, alpha_form=general.form, reported_model=reported,
        ci_method=rep.ci_method, evidence=tuple(evidence), fits=fits, modes_g=free.g, modes_tau=free.tau,
        spectrum_used=spectrum is not None, notes=tuple(notes), omega=w, storage=gp, loss=gpp, spectrum=spectrum,
        options=opts, rouse_form=form, rouse_form_delta_bic=dbic, entanglement=ent, noise=noise,
    )


def _signature_of_the_chain(evidence: Sequence[Evidence], rep: BeadSpringFit, w: np.ndarray) -> list[str]:
    """Why a failed "G' > G'' with a rising G''" test does not speak against a Rouse or Zimm verdict.

    A finite chain shows that signature of entanglement itself where its modes run out near ω_max (G' levels
    off at N G0; models/signatures.py): when the reported chain fit shows it too, over at least the test's
    threshold, the note says so with the chain's shortest mode time.
    """
    e = next((x for x in evidence if x.test == "storage_dominated" and x.passed is False), None)
    if e is None or rep.storage_fit is None:
        return []
    fitted = sg.storage_dominated_rise(w, rep.storage_fit, rep.loss_fit)
    if fitted < THRESHOLDS["storage_decades"]:
        return []
    tau_n = float(rep.mode_times()[-1])
    return [f"G' above G'' with a rising G'' over {e.value:.2f} decades, a sign of entanglement in other samples, "
            f"is shown by the fitted chain too ({fitted:.2f} decades): its modes run out near the highest "
            f"frequency (shortest mode time {_g(tau_n)} s, ω_max τ_N = {number(w[-1] * tau_n, 2)}), so here it "
            "speaks for the chain, not against it"]


def _reported_fit(fits: Mapping[str, BeadSpringFit], verdict: str, data: tuple, solvent: bool,
                  intervals: bool) -> tuple[str, BeadSpringFit]:
    """The reported model (the better Rouse form, the best Zimm model, else the lowest BIC) with its intervals."""
    if verdict == "rouse":
        reported = best_model(fits, ROUSE_MODELS)
    elif verdict == "zimm":
        reported = best_model(fits, ZIMM_MODELS)
    else:
        reported = min(fits, key=lambda m: fits[m].bic)
    rep = fits[reported]
    if intervals and verdict in ("rouse", "zimm"):
        rep = add_intervals(rep, *data, solvent=solvent, params=("tau1", "G0"))
    elif rep.ci_method == "none":
        rep = jacobian_intervals(rep, *data, solvent=solvent)
    return reported, rep


def _checked_fit_intervals(rep: BeadSpringFit, general: BeadSpringFit, w: np.ndarray) -> tuple[tuple, list[str]]:
    """τ_R, G0 and alpha intervals with zero-width ones withheld and parameters at a search bound flagged."""
    rb, gb = rep.at_bound(w), general.at_bound(w)
    tau_ci, n1 = checked_interval("tau_R", rep.tau1, rep.tau1_ci, rb.get("tau1", ""))
    G0_ci, n2 = checked_interval("G0", rep.G0, rep.G0_ci)
    a_ci, n3 = checked_interval("alpha", general.a, general.a_ci, gb.get("a", ""))
    notes = [n for n in (n1, n2, n3) if n]
    if "N" in rb:
        notes.append(f"N = {rep.N:.4g} lies at its search bound ({rb['N']})")
    return (tau_ci, G0_ci, a_ci), notes


#: Reasons of :func:`decide` that are reached only after the bead-spring tests (the exponent interval matters).
_REACHED_CHAINS = ("a Rouse chain", "a Zimm chain", "neither the Rouse", "G' > G''", "G' stays", "the spectrum has")


def _checked_entanglement(ent: Entanglement) -> tuple[Entanglement, list[str]]:
    """The entanglement result with zero-width intervals withheld (and parameters at a bound flagged).

    M_e's and Z's intervals follow from the G_N⁰ interval that is kept.
    """
    bound = ent.bsw.at_bound if ent.bsw is not None and ent.GN0_method == "bsw_fit" else ()
    g_ci, n1 = checked_interval("G_N0", ent.GN0, ent.GN0_ci, "G_N" if "G_N" in bound else "")
    t_ci, n2 = checked_interval("tau_d", ent.tau_d, ent.tau_d_ci, "tau_max" if "tau_max" in bound else "")
    est = tuple(dataclasses.replace(e, ci=checked_interval(e.method, e.value, e.ci)[0]) for e in ent.estimates)
    checked = dataclasses.replace(ent, GN0_ci=g_ci, tau_d_ci=t_ci, estimates=est)
    return mass_intervals(checked), [n for n in (n1, n2) if n]


def _recover_spectrum(sweep: Sweep, spectrum: Any, use_spectrum: bool) -> tuple[Any, str]:
    """The given spectrum, or ``invert(sweep)`` with the default settings; (None, why) when not available."""
    if spectrum is not None or not use_spectrum:
        return spectrum, "the spectrum test was switched off"
    try:
        from ...spectrum.invert import invert
    except ImportError:
        return None, "the continuous spectrum (tauspec.spectrum) is not available in this installation"
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", WeakResultWarning)
            return invert(sweep), ""
    except TauspecError as exc:  # the fits and data-level tests still stand
        return None, f"the continuous spectrum could not be recovered: {exc.reason}"


def _first_evidence(sweep: Sweep, spectrum: Any, free: sg.SparseModes, solvent: bool) -> tuple[list[Evidence], float]:
    """The describability tests (run before any verdict) and the data's relative noise."""
    w, gp, gpp = sweep.omega, sweep.storage, sweep.loss
    free_ge = sg.sparse_modes(w, gp, gpp, solvent=solvent, equilibrium_modulus=True)
    free_rms = math.sqrt(free_ge.chi2 / free_ge.n_data)
    if spectrum is not None:
        fit_rms, what = float(spectrum.residual_rms), "recovered smooth spectrum (Tikhonov)"
    else:
        fit_rms, what = free_rms, "nonnegative discrete spectrum (unregularized NNLS, Jakes 1995)"
    return describability_evidence(w, gp, gpp, fit_rms, what, free_rms)


def _fit_notes(verdict: str, rep: BeadSpringFit, general: BeadSpringFit, reported: str, w: np.ndarray,
               intervals: bool) -> list[str]:
    notes = []
    if rep.N > 1 and w[-1] * float(rep.mode_times()[-1]) < 0.3:
        notes.append("the fastest chain modes lie beyond omega_max: N is only bounded below and eta_s includes "
                     "the viscosity of the unresolved fast modes (the two trade off)")
    if verdict not in ("rouse", "zimm"):
        notes.append("the intervals are Jacobian (Wald) intervals: profile likelihood is computed only when the "
                     "verdict is rouse or zimm")
    if not intervals:
        notes.append("intervals were not computed")
    for f in (rep, general):
        notes.extend(f"{f.model}: {n}" for n in f.notes)
    if verdict not in ("rouse", "zimm"):
        notes.append(f"tau_R and G0 are those of the best-fitting bead-spring model ({reported}); they are not "
                     "Rouse parameters of this sample")
    return notes


def _entanglement_meta(sweep: Sweep) -> dict[str, float]:
    """Density (kg/m³), temperature (K) and molecular weight (g/mol) from the sweep's metadata, when given."""
    out: dict[str, float] = {}
    src = sweep.source or sweep.name
    try:
        if sweep.meta.get("density") is not None:
            out["density"] = density_kg_m3(sweep.meta["density"])
        if sweep.meta.get("molecular_weight") is not None:
            out["molecular_weight"] = molar_mass_g_mol(sweep.meta["molecular_weight"])
    except ValueError as exc:
        raise SweepError(str(exc), src) from None
    T = sweep.meta_number("temperature", kind="temperature")
    if T is not None:
        out["temperature"] = T
    return out


def _form_reason(fits: Mapping[str, BeadSpringFit], verdict: str) -> str:
    """Why the reported form: its BIC against the other form of the same family, in words."""
    names = ROUSE_MODELS if verdict != "zimm" else ZIMM_MODELS
    best = best_model(fits, names)
    others = [fits[m] for m in names if fits[m].form != fits[best].form and fits[m].a == fits[best].a]
    if not others:
        return ""
    delta = others[0].bic - fits[best].bic
    return (f"BIC lower by {delta:.1f} than the {FORM_NAMES[others[0].form]} form, "
            f"{_bic_strength(delta)} (Kass & Raftery 1995)")


def _longest_time(spectrum: Any) -> float:
    """The longest time where H is above 1 % of its maximum inside the supported window."""
    tau = np.asarray(spectrum.tau)
    H = np.asarray(spectrum.H)
    mask = np.asarray(spectrum.in_window) & (H > 0.01 * max(float(np.max(H)), 1e-300))
    return float(tau[mask][-1]) if np.any(mask) else float(tau[np.argmax(H)])
