"""What the user reads: the words, symbols and units of every number tauspec prints, and numbers rounded.

One vocabulary for the report, the command line's text summaries and the figures, so that a quantity is called
the same everywhere.  Keys are the JSON keys of the results (a public contract); the words are ours.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from typing import Any

from ..rounding import counted, interval, is_finite_number, number, telling_digits

__all__ = ["LEFT_OUT", "QUANTITIES", "EVIDENCE_WORDS", "VERDICT_WORDS", "number", "quantity", "interval",
           "telling_digits", "evidence_line",
           "symbol", "unit", "words", "plain_words", "key_numbers", "gel_exponent", "zero_shear_viscosity",
           "is_finite_number", "error_words", "counted"]

#: The status of a batch row whose block is not a frequency sweep (an amplitude, time or temperature sweep in
#: the same export as frequency sweeps): neither a result nor a failure (statuses: "ok", "error", this).  Here,
#: in the one vocabulary, so that the batch's workers import nothing heavier to write it.
LEFT_OUT = "left out"

#: JSON key → (symbol, words, unit).  A unit of "" is a pure number.
QUANTITIES: Mapping[str, tuple[str, str, str]] = {
    "tau_R": ("τ_R", "Rouse time, the longest bead-spring relaxation time τ_1", "s"),
    "G0": ("G0", "modulus of each bead-spring mode (G0 = cRT/M for Rouse chains)", "Pa"),
    "alpha": ("a", "mode exponent of τ_p = τ_R p^(−a): 2 for Rouse, 1.5–1.76 for Zimm chains", ""),
    "N": ("N", "number of bead-spring modes", ""),
    "GN0": ("G_N⁰", "plateau modulus of the entanglement network", "Pa"),
    "tau_d": ("τ_d", "terminal (longest) relaxation time of the entangled sample", "s"),
    "Me": ("M_e", "entanglement molecular weight ρRT/G_N⁰", "g/mol"),
    "Z": ("Z", "entanglements per chain, M/M_e", ""),
    "n": ("n", "power-law exponent of a critical gel, G′ ∝ G″ ∝ ω^n", ""),
    "S": ("S", "gel strength, G′ = S Γ(1−n) cos(nπ/2) ω^n", "Pa·s^n"),
    "eta0": ("η0", "zero-shear viscosity from the Maxwell modes", "Pa·s"),
    "eta_s": ("η_s", "Newtonian high-frequency contribution (solvent plus modes faster than the window)", "Pa·s"),
    "G_e": ("G_e", "equilibrium modulus", "Pa"),
    "Je0": ("J_e⁰", "steady-state compliance", "1/Pa"),
    "Je0_polymer": ("J_e⁰ (polymer)", "steady-state compliance of the polymer alone", "1/Pa"),
    "tau_n": ("τ_n", "number-average relaxation time", "s"),
    "tau_w": ("τ_w", "weight-average relaxation time", "s"),
    "tau_longest": ("τ_longest", "longest relaxation time", "s"),
    "n_modes": ("modes", "number of Maxwell modes", ""),
    "lambda": ("λ", "regularization strength of the spectrum (dimensionless)", ""),
    "residual_rms": ("rms", "relative rms residual of the spectrum's fit to G′ and G″", "%"),
    "a": ("a", "mode exponent of τ_p = τ_R p^(−a)", ""),
}

#: The verdicts of the diagnosis in a few words.
VERDICT_WORDS: Mapping[str, str] = {
    "rouse": "unentangled bead-spring chains (Rouse)",
    "zimm": "bead-spring chains with hydrodynamic interaction (Zimm)",
    "entangled": "entangled chains",
    "gel": "gel-like: no terminal flow",
    "other": "neither Rouse nor Zimm",
    "inconclusive": "the data cannot decide",
}

#: Each test of the diagnosis's evidence (its ``test`` key) in words, with the unit of its value.
EVIDENCE_WORDS: Mapping[str, tuple[str, str]] = {
    "window_decades": ("width of the frequency window", "decades"),
    "terminal_slope_storage": ("terminal slope of G′", ""),
    "terminal_slope_loss": ("terminal slope of G″", ""),
    "plateau": ("extent of a rubbery plateau", "decades"),
    "critical_gel_power_law": ("common power-law exponent n of G′ and G″ (critical-gel test)", ""),
    "equilibrium_modulus": ("G′/G″ at the lowest frequency (solid test)", ""),
    "single_mode": ("share of the modulus in the strongest discrete mode", ""),
    "intermediate_region": ("reach beyond the terminal zone, ω_max τ_R", ""),
    "chain_modes": ("number of modes N of the Rouse fit", ""),
    "rouse_fit": ("Rouse fit: reduced χ² over that of a free discrete spectrum", ""),
    "zimm_fit": ("Zimm fit: reduced χ² over that of a free discrete spectrum", ""),
    "rouse_vs_zimm_bic": ("BIC of the Rouse fit minus that of the Zimm fit", ""),
    "mode_exponent": ("mode exponent a", ""),
    "mode_exponent_zimm": ("mode exponent a (Zimm test)", ""),
    "spectrum_slope": ("slope of H(τ) in the bead-spring region", ""),
    "spectrum_slope_zimm": ("slope of H(τ) in the bead-spring region (Zimm test)", ""),
    "terminal_mode": ("longest discrete mode against the Rouse fit, τ/τ_R and g/G0", ""),
    "mode_ratio_12": ("ratio of the first two discrete mode times, τ_1/τ_2", ""),
    "mode_ratio_13": ("ratio of the first and third discrete mode times, τ_1/τ_3", ""),
    "tan_delta_intermediate": ("tan δ in the bead-spring region", ""),
    "tan_delta_zimm": ("tan δ in the bead-spring region (Zimm test)", ""),
    "rouse_coefficient": ("G0 √τ_R from the ω^½ asymptote of G″ over that of the fit", ""),
    "phase_resolved": ("median tan δ (a phase angle the rheometer resolves)", ""),
    "noise_level": ("relative point-to-point scatter of the data", ""),
    "spectrum_describes": ("rms residual of a smooth spectrum over the data's scatter", ""),
    "kramers_kronig": ("misfit of G′ and G″ to each other (Kramers–Kronig, Booij & Thoone)", ""),
    "crossover_plateau": ("G′ above G″ between two crossovers", "decades"),
    "storage_dominated": ("G′ above G″ with G″ rising past the first crossover", "decades"),
    "entangled_shape": ("entangled shape of the spectrum, exponent n_e of its τ^n_e rise", ""),
}

# code words of free text (expected values, notes) and how a reader writes them
_SYMBOLS = [
    (r"\btau_R\b", "τ_R"), (r"\btau_N\b", "τ_N"), (r"\btau_1\b", "τ_1"), (r"\btau_d\b", "τ_d"),
    (r"\btau_w\b", "τ_w"), (r"\btau_max\b", "τ_max"),
    (r"\bG_N0\b", "G_N⁰"), (r"\btau_n\b", "τ_n"), (r"\btau\b", "τ"), (r"\bomega_max\b", "ω_max"),
    (r"\bomega_min\b", "ω_min"), (r"\bomega\b", "ω"), (r"\beta_s\b", "η_s"), (r"\beta0\b", "η0"),
    (r"\btan delta\b", "tan δ"), (r"\bdelta\b", "δ"), (r"\bchi2\b", "χ²"), (r"\bpi\b", "π"), (r"\bsqrt\b", "√"),
    (r"\btheta\b", "θ"), (r"\bgeneral_sine\b", "free-exponent chain"), (r"\brouse_continuum\b", "Rouse chain "
                                                                                        "(continuum form)"),
    (r"\bzimm_good_discrete\b", "Zimm chain (good solvent, discrete form)"),
    (r"\bzimm_theta_discrete\b", "Zimm chain (θ solvent, discrete form)"),
    (r"\bgeneral_power\b", "free-exponent chain (power-law form)"), (r"\bzimm_good\b", "Zimm chain (good solvent)"),
    (r"\bzimm_theta\b", "Zimm chain (θ solvent)"), (r">=", "≥"), (r"<=", "≤"), (r"\bG''", "G″"), (r"\bG'", "G′"),
    (r"\bG0\^2", "G0²"),
]


def plain_words(text: Any) -> str:
    """Free text of a result with its code spellings replaced by symbols (``tau_R`` → τ_R, ``>=`` → ≥)."""
    out = str(text)
    for pattern, repl in _SYMBOLS:
        out = re.sub(pattern, repl, out)
    return out


def symbol(key: str) -> str:
    """The symbol of a quantity (``tau_R`` → τ_R); unknown keys in words."""
    return QUANTITIES[key][0] if key in QUANTITIES else key.replace("_", " ")


def unit(key: str) -> str:
    """The unit of a quantity, "" for a pure number."""
    return QUANTITIES[key][2] if key in QUANTITIES else ""


def words(key: str) -> str:
    """What a quantity is, in words."""
    return QUANTITIES[key][1] if key in QUANTITIES else key.replace("_", " ")


def quantity(key: str, value: Any, ci: Any = None, *, digits: int = 3) -> str:
    """``τ_R = 2.41 s [2.39, 2.43]``: a quantity with its unit on the value and on the interval.

    More digits are shown when three would make an end of the interval read as the value itself.
    """
    digits = telling_digits(value, ci, digits)
    u = unit(key)
    text = f"{symbol(key)} = {number(value, digits)}"
    if u and number(value) != "–":
        text += f" {u}"
    iv = interval(ci, digits)
    if iv:
        text += f", 95 % interval {iv}" + (f" {u}" if u else "")
    if key == "N" and is_finite_number(value) and "." in number(value, digits):
        n = math.floor(float(value))  # the fit's N is continuous: a mixture of the two chains around it
        text += f" (a mixture of the chains of {n} and {n + 1} modes)"
    return text


def _value_words(value: Any, unit_text: str, bounds: str = "") -> str:
    """The value in words; with ``bounds`` (the expected text of a failed test), never spelled as one of its numbers.

    A reduced χ² ratio of 1.5703 against the bound 1.5699 read "1.57, expected ≤ 1.57" beside a failure: more
    digits are shown (up to six) until the value reads apart from every number of the bounds that it differs from.
    """
    if isinstance(value, list | tuple):
        return ", ".join(number(v) for v in value)
    text = number(value)
    if bounds and is_finite_number(value):
        others = {t for t in re.findall(r"\d+(?:\.\d+)?(?:e[-+]?\d+)?", bounds) if float(t) != abs(float(value))}
        digits = 3
        while digits < 6 and text.lstrip("-") in others:
            digits += 1
            text = number(value, digits)
    if text == "1" and unit_text == "decades":
        unit_text = "decade"
    return f"{text} {unit_text}" if unit_text and text != "–" else text


def evidence_line(e: Mapping[str, Any]) -> tuple[str, bool | None]:
    """One test of the evidence in words: ``terminal slope of G′: 1.99, expected 2 (≥ 1.7)``, and its outcome."""
    test = str(e.get("test", ""))
    phrase, unit_text = EVIDENCE_WORDS.get(test, (plain_words(test.replace("_", " ")), ""))
    value = e.get("value")
    expected = plain_words(e.get("expected", ""))
    if value is None:  # no number: the test was not made, or (passed) what it looks for was not found
        text = f"{phrase}: {'none found' if e.get('passed') is True else 'not made'}"
        note = e.get("note")
        if note:
            text += f" ({plain_words(note)})"
    else:
        text = f"{phrase}: {_value_words(value, unit_text, expected if e.get('passed') is False else '')}"
        if expected:
            text += f", expected {expected}"
    passed = e.get("passed")
    return text, passed if isinstance(passed, bool) else None


def zero_shear_viscosity(derived: Mapping[str, Any]) -> tuple[Any, str]:
    """η0 of a result's derived numbers when the data determine it, else None and why not.

    η0 = η_s + Σ g τ needs the terminal zone: when more than the flag's share of it comes from relaxation times
    longer than the supported window (a gel, whose η0 diverges, or a fluid whose terminal zone lies below
    ω_min), the number is the extrapolated modes', not the data's.  A share from shorter times is kept: η_s
    takes up the modes faster than the window.
    """
    eta0 = derived.get("eta0")
    if not is_finite_number(eta0):
        return None, ""
    if (derived.get("flags") or {}).get("eta0") and (derived.get("outside_side") or {}).get("eta0") == "long":
        share = (derived.get("outside_share") or {}).get("eta0")
        part = f"{100 * share:.0f} % of the modes' value" if is_finite_number(share) and share <= 1 else "most of it"
        return None, (f"η0 not determined by the data: {part} comes from relaxation times longer than the "
                      "supported window (the terminal zone is not in the sweep)")
    return eta0, ""


def gel_exponent(diag: Mapping[str, Any]) -> Any:
    """The gel exponent n of a diagnosis: its own key ``n``, else the value of the critical-gel test.

    The test's value is an exponent only where the test found one power law G′ ∝ G″ ∝ ω^n (it then fails: it
    expects none); a gel reached by an equilibrium modulus has no such law, and its straight-line slope is no n.
    """
    if diag.get("n") is not None:
        return diag.get("n")
    for e in diag.get("evidence") or []:
        if isinstance(e, Mapping) and e.get("test") == "critical_gel_power_law":
            return e.get("value") if e.get("passed") is False else None
    return None


def key_numbers(diag: Mapping[str, Any]) -> list[tuple[str, Any, Any]]:
    """The numbers that mean something for the verdict: [(JSON key, value, interval)].

    Rouse and Zimm: τ_R, G0, a, N.  Entangled: G_N⁰, τ_d, M_e, Z (when the diagnosis gives them; τ_R and G0
    of a bead-spring fit mean nothing there).  Gel: n and S.  Other and inconclusive: none.
    """
    verdict = diag.get("verdict")
    if verdict in ("rouse", "zimm"):
        return [("tau_R", diag.get("tau_R"), diag.get("tau_R_ci")), ("G0", diag.get("G0"), diag.get("G0_ci")),
                ("alpha", diag.get("alpha"), diag.get("alpha_ci")), ("N", diag.get("N"), None)]
    if verdict == "entangled":
        keys = [("GN0", "GN0_ci"), ("tau_d", "tau_d_ci"), ("Me", "Me_ci"), ("Z", "Z_ci")]
        return [(k, diag.get(k), diag.get(ci)) for k, ci in keys if is_finite_number(diag.get(k))]
    if verdict == "gel":
        out = [("n", gel_exponent(diag), diag.get("n_ci"))]
        if is_finite_number(diag.get("S")):
            out.append(("S", diag.get("S"), diag.get("S_ci")))
        return out
    return []


def error_words(error: str, file: str) -> str:
    """An error without the file name it starts with (the row names the file): ``line 4: row has ...``.

    The row of one block of a file is named ``file#k``; its error names the file alone.
    """
    file = next((f for f in (file, file.partition("#")[0]) if f and error.startswith(f"{f}:")), "")
    if file:
        rest = error[len(file) + 1:]
        line, sep, reason = rest.partition(": ")
        return f"line {line}: {reason}" if sep and line.isdigit() else rest.strip()
    return error
