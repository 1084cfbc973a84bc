"""The verdict rule: the ordered decision from the evidence (docs/diagnosis.md) and the statement of each verdict."""

from __future__ import annotations

from collections.abc import Sequence

from .evidence import THRESHOLDS, Evidence

__all__ = ["VERDICTS", "decide"]


VERDICTS = ("rouse", "zimm", "entangled", "gel", "other", "inconclusive")


# ----------------------------------------------------------------------------------------------- verdict


def decide(evidence: Sequence[Evidence]) -> tuple[str, str]:
    """Return (verdict, reason) from the evidence by the ordered rule of docs/diagnosis.md.

    1. window narrower than 2 decades → inconclusive;
    2. one power law over the whole window without a terminal zone, or a low-frequency solid plateau → gel;
    3. one discrete mode with ≥ 90 % of the modulus → other (a single relaxation);
    4. a rubbery plateau over ≥ 1 decade → entangled;
    5. terminal slopes not reached → inconclusive (a Rouse region cannot be told from a gel or a plateau);
    6. less than ~1.5 decades beyond the terminal crossover → inconclusive (only the terminal zone is seen);
       otherwise fewer than 5 fitted chain modes → other (too narrow a relaxation for a chain);
    7. Rouse fit adequate, a consistent with 2, Rouse BIC below Zimm's, at most one supporting test failed
       (spectrum slope, tan δ, π/(2√2) cross-check, mode ratios) → rouse;
    8. Zimm fit adequate, a consistent with 1.5 or 1.764, Zimm BIC below Rouse's, at most one supporting
       Zimm test failed (spectrum slope, tan δ) → zimm;
    9. otherwise → other.
    """
    e = {x.test: x for x in evidence}

    def ok(name: str) -> bool:
        return e[name].passed is True

    def failed(name: str) -> bool:
        return e[name].passed is False

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
    if not terminal:
        return "inconclusive", ("the terminal slopes (G' ∝ ω², G'' ∝ ω) are not reached inside the window, so a "
                                "bead-spring region cannot be told from a critical gel or the onset of a plateau")
    if not ok("intermediate_region"):
        return "inconclusive", ("the window shows the terminal zone but less than about 1.5 decades of the "
                                "bead-spring region beyond it")
    if not ok("chain_modes"):
        return "other", (f"the relaxation is too narrow for a chain: the best Rouse chain has only "
                         f"{e['chain_modes'].value:.1f} modes although the window reaches far beyond the terminal zone")
    support = ["spectrum_slope", "tan_delta_intermediate", "rouse_coefficient", "terminal_mode", "mode_ratio_12",
               "mode_ratio_13"]
    # the three discrete-mode tests come from one sparse solution and fail together when it splits or merges
    # modes, so they count as one supporting test
    failed = [s for s in support[:3] if e[s].passed is False]
    modes_failed = [s for s in support[3:] if e[s].passed is False]
    if modes_failed:
        failed.append("/".join(modes_failed))
    rouse_core = ok("rouse_fit") and ok("mode_exponent") and ok("rouse_vs_zimm_bic")
    if rouse_core and len(failed) <= THRESHOLDS["max_support_failures"]:
        return "rouse", "the exact Rouse chain fits within the noise and the mode exponent is 2" + (
            f" (supporting test failed: {failed[0]})" if failed else "")
    zsupport = ["spectrum_slope_zimm", "tan_delta_zimm"]
    zfailed = [s for s in zsupport if e[s].passed is False]
    zimm_core = ok("zimm_fit") and ok("mode_exponent_zimm") and not ok("rouse_vs_zimm_bic")
    if zimm_core and len(zfailed) <= THRESHOLDS["max_support_failures"]:
        return "zimm", "a Zimm chain fits within the noise and the mode exponent is that of hydrodynamic interaction"
    bad = [x.test for x in evidence if x.passed is False and x.test in
           ("rouse_fit", "zimm_fit", "mode_exponent", "mode_exponent_zimm", *support)]
    return "other", "neither the Rouse nor the Zimm chain passes: " + ", ".join(bad)


_STATEMENTS = {
    "rouse": "The sample behaves like unentangled Gaussian bead-spring chains (Rouse): tau_R = {tau} s, G0 = {G0} Pa.",
    "zimm": "The sample behaves like bead-spring chains with hydrodynamic interaction (Zimm, mode exponent "
            "{alpha}), not like Rouse chains.",
    "entangled": "The sample is entangled: a rubbery plateau rules out the Rouse description.",
    "gel": "The sample is gel-like (no terminal flow), so the Rouse description does not apply.",
    "other": "Neither the Rouse nor the Zimm bead-spring description fits this sample.",
    "inconclusive": "These data cannot decide whether the Rouse description holds: {reason}.",
}
