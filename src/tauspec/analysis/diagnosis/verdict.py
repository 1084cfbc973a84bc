"""The verdict rule: the ordered decision from the evidence (docs/diagnosis.md) and the statement of each verdict."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

from .evidence import THRESHOLDS, Evidence

__all__ = ["VERDICTS", "decide"]


VERDICTS = ("rouse", "zimm", "entangled", "gel", "other", "inconclusive")


# ----------------------------------------------------------------------------------------------- verdict


#: The describability tests, in the order they are reported, with the reason each gives when it fails.
_DESCRIBABILITY = (
    ("phase_resolved", "one modulus lies below 1e-4 of the other at every frequency: the phase angle is below "
                       "what an oscillatory rheometer resolves, so the moduli carry no relaxation"),
    ("noise_level", "the point-to-point scatter of the moduli is {percent:.0f} %: they carry no shape"),
    ("spectrum_describes", "no nonnegative relaxation spectrum fits the moduli within their own scatter "
                           "(residual {value:.1f} times the scatter)"),
    ("kramers_kronig", "G' and G'' violate the Kramers-Kronig relations beyond the noise (median misfit {value:.2f} "
                       "in ln G by the local power-law form)"),
)

#: Signatures of entanglement besides a plateau of a decade, each with its statement.
_ENTANGLED = (
    ("crossover_plateau", "G' > G'' between two crossovers over {value:.2f} decades (the plateau zone between the "
                          "terminal and the transition zone)"),
    ("entangled_shape", "the spectrum has the entangled shape: a tau^(n_e) rise ending in a sharp cut-off (BSW 1990)"),
    ("storage_dominated", "G' stays above G'' with a rising G'' over {value:.2f} decades above the terminal "
                          "crossover: a spectrum flatter than any bead-spring chain's"),
)


def _first_failed(e: Mapping[str, Evidence], table: Sequence[tuple[str, str]]) -> tuple[str, str] | None:
    for name, text in table:
        if name in e and e[name].passed is False:
            v = e[name].value
            v = v if isinstance(v, int | float) else math.nan
            return name, text.format(value=v, percent=100 * v)
    return None


def decide(evidence: Sequence[Evidence]) -> tuple[str, str]:
    """Return (verdict, reason) from the evidence by the ordered rule of docs/diagnosis.md.

    0. the data are not describable (phase not resolved, scatter too large, no nonnegative spectrum fits
       within the scatter, Kramers–Kronig violated) → inconclusive;
    1. window narrower than 2 decades → inconclusive;
    2. one power law over the whole window without a terminal zone, or a low-frequency solid plateau → gel;
    3. one discrete mode with ≥ 90 % of the modulus → other (a single relaxation);
    4. a rubbery plateau over ≥ 1 decade → entangled;
    5. terminal slopes not reached → entangled when another entanglement signature shows (G' > G'' between two
       crossovers, the entangled spectrum shape, G' > G'' with a rising G''), else inconclusive;
    6. less than ~1.5 decades beyond the terminal crossover → inconclusive (only the terminal zone is seen);
       otherwise fewer than 5 fitted chain modes → entangled on a signature of step 5, else other;
    7. a Rouse form fits, a consistent with 2, Rouse BIC below Zimm's, at most one supporting test failed → rouse;
    8. a Zimm form fits, a consistent with 1.5 or 1.764, Zimm BIC below Rouse's, at most one supporting Zimm
       test failed → zimm;
    9. entangled on a signature of step 5, otherwise → other.
    """
    e = {x.test: x for x in evidence}

    def ok(name: str) -> bool:
        return e[name].passed is True

    def failed(name: str) -> bool:
        return e[name].passed is False

    bad = _first_failed(e, _DESCRIBABILITY)
    if bad is not None:
        return "inconclusive", bad[1]
    if not ok("window_decades"):
        return "inconclusive", f"the sweep spans {e['window_decades'].value:.2f} decades; at least 2 are needed"
    terminal = ok("terminal_slope_storage") and ok("terminal_slope_loss")
    if failed("equilibrium_modulus"):
        return "gel", "G' levels off above G'' at the lowest frequencies: an equilibrium modulus G_e > 0"
    if failed("critical_gel_power_law") and not terminal:
        return "gel", (f"G' and G'' follow one power law (n = {e['critical_gel_power_law'].value:.2f}) over the "
                       "whole window with no terminal zone")
    if failed("single_mode"):
        return "other", "one Maxwell mode carries nearly all the modulus: a single relaxation, not a chain spectrum"
    if failed("plateau"):
        return "entangled", f"a rubbery plateau over {e['plateau'].value:.1f} decades"
    sign = _first_failed(e, _ENTANGLED)
    if not terminal:
        if sign is not None:
            return "entangled", sign[1]
        return "inconclusive", ("the terminal slopes (G' ∝ ω², G'' ∝ ω) are not reached inside the window, so a "
                                "bead-spring region cannot be told from a critical gel or the onset of a plateau")
    if not ok("intermediate_region"):
        return "inconclusive", ("the window shows the terminal zone but less than about 1.5 decades of the "
                                "bead-spring region beyond it")
    if not ok("chain_modes"):
        if sign is not None:
            return "entangled", sign[1]
        return "other", (f"the relaxation is too narrow for a chain: the best Rouse chain has only "
                         f"{e['chain_modes'].value:.1f} modes although the window reaches far beyond the terminal zone")
    chain = _bead_spring_verdict(e)
    if chain is not None:
        return chain
    if sign is not None:
        return "entangled", sign[1]
    support = ("spectrum_slope", "tan_delta_intermediate", "rouse_coefficient", "terminal_mode", "mode_ratio_12",
               "mode_ratio_13")
    bad_tests = [x.test for x in evidence if x.passed is False and x.test in
                 ("rouse_fit", "zimm_fit", "mode_exponent", "mode_exponent_zimm", *support)]
    return "other", "neither the Rouse nor the Zimm chain passes: " + ", ".join(bad_tests)


def _bead_spring_verdict(e: Mapping[str, Evidence]) -> tuple[str, str] | None:
    """Steps 7 and 8 of :func:`decide`: rouse or zimm, or None."""
    support = ["spectrum_slope", "tan_delta_intermediate", "rouse_coefficient", "terminal_mode", "mode_ratio_12",
               "mode_ratio_13"]
    # the three discrete-mode tests come from one sparse solution and fail together when it splits or merges
    # modes, so they count as one supporting test
    failed = [s for s in support[:3] if e[s].passed is False]
    modes_failed = [s for s in support[3:] if e[s].passed is False]
    if modes_failed:
        failed.append("/".join(modes_failed))
    rouse_core = all(e[n].passed is True for n in ("rouse_fit", "mode_exponent", "rouse_vs_zimm_bic"))
    if rouse_core and len(failed) <= THRESHOLDS["max_support_failures"]:
        return "rouse", "a Rouse chain fits within the noise and the mode exponent is 2" + (
            f" (supporting test failed: {failed[0]})" if failed else "")
    zfailed = [s for s in ("spectrum_slope_zimm", "tan_delta_zimm") if e[s].passed is False]
    zimm_core = e["zimm_fit"].passed is True and e["mode_exponent_zimm"].passed is True and \
        e["rouse_vs_zimm_bic"].passed is not True
    if zimm_core and len(zfailed) <= THRESHOLDS["max_support_failures"]:
        return "zimm", "a Zimm chain fits within the noise and the mode exponent is that of hydrodynamic interaction"
    return None


_STATEMENTS = {
    "rouse": "The sample behaves like unentangled Gaussian bead-spring chains (Rouse, {form} form: {why}): "
             "tau_R = {tau} s, G0 = {G0} Pa.",
    "zimm": "The sample behaves like bead-spring chains with hydrodynamic interaction (Zimm, mode exponent "
            "{alpha}, {form} form: {why}), not like Rouse chains.",
    "entangled": "The sample is entangled ({reason}), so the Rouse description does not apply: G_N0 = {GN0} Pa "
                 "({GN0_method}), tau_d = {tau_d} s.",
    "gel": "The sample is gel-like (no terminal flow), so the Rouse description does not apply.",
    "other": "Neither the Rouse nor the Zimm bead-spring description fits this sample.",
    "inconclusive": "These data cannot decide whether the Rouse description holds: {reason}.",
}
