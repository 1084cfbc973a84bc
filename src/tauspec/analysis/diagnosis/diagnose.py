"""Does the unentangled bead-spring (Rouse) description hold?  The evidence and the verdict.

:func:`diagnose` fits the bead-spring models of :mod:`tauspec.beadspring` to a sweep, computes the data-level
signatures of :mod:`tauspec.signatures` and the tests on the recovered spectrum, and decides one verdict by
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

import warnings
from collections.abc import Mapping
from typing import Any

import numpy as np

from ...data.record import field, record, resolve_options
from ...data.sweep import Sweep
from ...errors import SettingsError, TauspecError, WeakResultWarning
from ...models import signatures as sg
from ...models.beadspring import BeadSpringFit, fit_all
from ...models.intervals import add_intervals, jacobian_intervals
from ...spectrum.threads import limited
from .evidence import A_ZIMM, Evidence, _fmt_value, _g, _gather
from .options import DiagnoseOptions
from .verdict import _STATEMENTS, decide

__all__ = ["Diagnosis", "diagnose"]


@record(schema="tauspec.diagnosis/1")
class Diagnosis:
    """The bead-spring diagnosis of one sweep.

    ``tau_R`` (s) and ``G0`` (Pa) are τ_1 and the mode modulus of the reported bead-spring fit
    (``reported_model``), with 95 % intervals; ``alpha`` is the mode exponent a of whichever general form
    (finite-N sine or truncated power law, ``alpha_form``) fits better, with its interval.  ``modes_g`` and
    ``modes_tau`` are the sparse discrete spectrum (JSON: ``modes``).  The data (``omega``, ``storage``,
    ``loss``), the spectrum used and the options are kept in memory for figures, not in the JSON form.
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
            elif k != "modes_tau":
                out[k] = v
        return out

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        modes = d.pop("modes", None) or {}
        d["modes_g"], d["modes_tau"] = modes.get("g", []), modes.get("tau", [])
        return d

    def report(self) -> str:
        """Return a plain-text report: verdict, parameters, fit statistics and every test."""
        lines = [f"{self.sample}: {self.verdict.upper()}", f"  {self.statement}"]
        if self.reason:
            lines.append(f"  reason: {self.reason}")
        lines.append(f"  reported fit: {self.reported_model}   (intervals: {self.ci_method})")
        lines.append(f"  tau_R = {_g(self.tau_R)} s   95% [{_g(self.tau_R_ci[0])}, {_g(self.tau_R_ci[1])}]")
        lines.append(f"  G0    = {_g(self.G0)} Pa  95% [{_g(self.G0_ci[0])}, {_g(self.G0_ci[1])}]")
        lines.append(f"  N     = {self.N:.1f}    eta_s = {_g(self.eta_s)} Pa s")
        lines.append(f"  alpha = {self.alpha:.3f}  95% [{self.alpha_ci[0]:.3f}, {self.alpha_ci[1]:.3f}]"
                     f"  ({self.alpha_form} form)")
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
    spectrum_note = "the spectrum test was switched off"
    if spectrum is None and use_spectrum:
        try:
            from ...spectrum.invert import invert
        except ImportError:
            spectrum_note = "the continuous spectrum (tauspec.spectrum) is not available in this installation"
        else:
            try:
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore", WeakResultWarning)
                    spectrum = invert(sweep)
            except TauspecError as exc:  # the fits and data-level tests still stand
                spectrum_note = f"the continuous spectrum could not be recovered: {exc.reason}"
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
    evidence = _gather(sweep, fits, fits[gname], free, spectrum, spectrum_note)
    verdict, reason = decide(evidence)
    # The profile intervals are the costly part: compute them where the exponent test decides
    # (the rule reached its bead-spring steps), then decide again with them.
    if intervals and verdict in ("rouse", "zimm", "other"):
        fits = {**fits, gname: add_intervals(fits[gname], w, gp, gpp, solvent=solvent, params=("a",))}
        evidence = _gather(sweep, fits, fits[gname], free, spectrum, spectrum_note)
        verdict, reason = decide(evidence)
    general = fits[gname]
    if verdict == "rouse":
        reported = "rouse"
    elif verdict == "zimm":
        reported = min(A_ZIMM, key=lambda m: fits[m].bic)
    else:
        reported = min(fits, key=lambda m: fits[m].bic)
    rep = fits[reported]
    if intervals and verdict in ("rouse", "zimm"):
        rep = add_intervals(rep, w, gp, gpp, solvent=solvent, params=("tau1", "G0"))
    elif rep.ci_method == "none":
        rep = jacobian_intervals(rep, w, gp, gpp, solvent=solvent)
    fits = {**fits, reported: rep}
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
    statement = _STATEMENTS[verdict].format(tau=_g(rep.tau1), G0=_g(rep.G0), alpha=f"{general.a:.2f}",
                                            reason=reason)
    if verdict not in ("rouse", "zimm"):
        notes.append(f"tau_R and G0 are those of the best-fitting bead-spring model ({reported}); they are not "
                     "Rouse parameters of this sample")
    return Diagnosis(
        verdict=verdict, statement=statement, reason=reason, sample=sweep.name, source=sweep.source,
        tau_R=rep.tau1, tau_R_ci=rep.tau1_ci, G0=rep.G0, G0_ci=rep.G0_ci, N=rep.N, eta_s=rep.eta_s,
        alpha=general.a, alpha_ci=general.a_ci, alpha_form=general.form, reported_model=reported,
        ci_method=rep.ci_method, evidence=tuple(evidence), fits=fits, modes_g=free.g, modes_tau=free.tau,
        spectrum_used=spectrum is not None, notes=tuple(notes), omega=w, storage=gp, loss=gpp, spectrum=spectrum,
        options=opts,
    )


def _longest_time(spectrum: Any) -> float:
    """The longest time where H is above 1 % of its maximum inside the supported window."""
    tau = np.asarray(spectrum.tau)
    H = np.asarray(spectrum.H)
    mask = np.asarray(spectrum.in_window) & (H > 0.01 * max(float(np.max(H)), 1e-300))
    return float(tau[mask][-1]) if np.any(mask) else float(tau[np.argmax(H)])
