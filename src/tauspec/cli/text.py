"""The text summaries the commands print: short, every number with its unit, the caveats kept for the end.

Each function returns ``(text, caveats)``; :func:`tauspec.cli.common.print_text` prints the caveats once,
after everything else.  The words and units come from :mod:`tauspec.output.words`.
"""

from __future__ import annotations

import math
from typing import Any

from ..output.words import counted, number, quantity

__all__ = ["spectrum_text", "modes_text", "derived_text", "bands_text", "curve_text"]

_RULES = {"lcurve": "L-curve corner", "gcv": "GCV minimum", "fixed": "given"}
#: The derived numbers the summary shows (the JSON has them all).
_DERIVED = (("eta0", "η0", "Pa·s"), ("Je0", "J_e⁰", "1/Pa"), ("tau_w", "τ_w", "s"),
            ("tau_longest", "longest τ", "s"))


def spectrum_text(spectrum: Any) -> tuple[str, list[str]]:
    """The spectrum in three lines; its cautions as caveats."""
    w = spectrum.omega
    lo, hi = spectrum.window
    window = (f"supported window τ = {number(lo)}–{number(hi)} s" if lo < hi else
              "supported window: empty (the frequency range is narrower than e^π)")
    eta_how = ("given: the solvent's viscosity" if spectrum.options.eta_s is not None else
               "Newtonian high-frequency contribution: solvent plus modes faster than the window")
    lines = [
        f"{spectrum.sample}: {len(w)} points, ω = {number(w[0])}–{number(w[-1])} rad/s",
        f"  spectrum: λ = {number(spectrum.strength)} ({_RULES.get(spectrum.chosen_by, spectrum.chosen_by)}), "
        f"rms residual {100 * spectrum.residual_rms:.1f} %, {window}",
        f"            η_s = {number(spectrum.eta_s)} Pa·s ({eta_how})"
        + (f", G_e = {number(spectrum.G_e)} Pa" if spectrum.options.equilibrium_modulus else ""),
    ]
    return "\n".join(lines), list(spectrum.warnings)


def modes_text(modes: Any) -> tuple[str, list[str]]:
    """The Maxwell modes as a small table (± standard errors), those outside the window marked."""
    how = (f"F-test, significance {modes.options.significance:g}" if modes.options.n_modes is None
           else "number given")
    lines = [f"  {counted(modes.n_modes, 'Maxwell mode')} ({how}), rms residual {100 * modes.residual_rms:.1f} %:",
             f"    {'g ± std. error [Pa]':<21}  τ ± std. error [s]"]
    for g, gse, t, tse, out in zip(modes.g, modes.g_se, modes.tau, modes.tau_se, modes.outside_window):
        row = f"    {number(g):>8} ± {number(gse, 2):<10}  {number(t):>8} ± {number(tse, 2):<10}"
        lines.append((row + "  outside the supported window") if out else row.rstrip())
    return "\n".join(lines), list(modes.warnings)


def derived_text(*derived: Any) -> tuple[str, list[str]]:
    """η0, J_e⁰, τ_w and the longest time from each basis side by side; flagged values marked and explained."""
    head = f"  {'derived':<17}" + "".join(f"{'from the ' + d.basis:>19}" for d in derived)
    lines = [head]
    caveats = []
    for key, sym, u in _DERIVED:
        cells = []
        for d in derived:
            flagged = bool(d.flags.get(key))
            cells.append(f"{number(getattr(d, key)):>18}{'*' if flagged else ' '}")
            if flagged:
                side = ("longer" if d.outside_side.get(key, "long") == "long" else "shorter")
                share = 100 * d.outside_share[key]
                how = f"{share:.0f} % of it comes" if share <= 100 else f"it changes by {share:.0f} % without those"
                caveats.append(f"{sym} from the {d.basis}: {how} from relaxation times {side} than the supported "
                               "window; the data do not determine it")
        lines.append((f"    {sym + ' [' + u + ']':<15}" + "".join(cells)).rstrip())
    if caveats:
        lines.append("    * leans on relaxation times outside the supported window (see the caveats)")
    for d in derived:
        caveats += [f"from the {d.basis}: {n}" for n in d.notes]
    return "\n".join(lines), caveats


#: Units of the bootstrap statistics (keys of ``Bands.intervals``); ``modes_*`` take those of their base.
_STATISTIC_UNITS = {"eta_s": "eta_s", "G_e": "G_e", "eta0": "eta0", "Je0": "Je0", "tau_n": "tau_n", "tau_w": "tau_w",
                    "tau_longest": "tau_longest", "n_modes": "n_modes", "tau_R": "tau_R", "G0": "G0", "a": "a"}


def bands_text(bands: Any, derived: Any = ()) -> tuple[str, list[str]]:
    """The confidence band in one line and every interval with its unit.

    ``derived`` (the :class:`~tauspec.modes.derived.Derived` of the modes and of the spectrum) marks the
    intervals of numbers flagged there: resampling the noise does not move what lies outside the supported
    window, so such an interval is as narrow as the others and says nothing about that part.
    """
    n = bands.noise
    flags = {d.basis: d.flags for d in derived}
    lines = [f"  {100 * bands.level:g} % confidence band of H(τ): {bands.n_resamples} resamples; noise G′ "
             f"{100 * n.storage:.1f} %, G″ {100 * n.loss:.1f} % ({'given' if n.given else 'from the residuals'})"]
    marked = False
    for name, iv in bands.intervals.items():
        base = name[len("modes_"):] if name.startswith("modes_") else name
        key = _STATISTIC_UNITS.get(base, base)
        text = quantity(key, iv.estimate, (iv.lo, iv.hi))
        if base != name:
            text = "from the modes: " + text
        flagged = bool(flags.get("modes" if base != name else "spectrum", {}).get(base))
        marked |= flagged
        text = text.replace("95 % interval", f"{100 * iv.level:g} % interval")
        lines.append(f"    {text}" + (" *" if flagged else ""))
    if marked:
        lines.append("    * leans on relaxation times outside the supported window: the interval covers the noise "
                     "only, not those times")
    caveats = []
    if bands.n_failed:
        caveats.append(f"{bands.n_failed} of {bands.n_resamples} resamples failed and were left out of the band")
    return "\n".join(lines), caveats


def curve_text(curve: Any, *, table: bool) -> tuple[str, list[str]]:
    """A predicted curve: its range in words and, with ``table``, the values (x, y, flag) one per line."""
    from ..output.figures.curve import CURVE_WORDS

    xw, yw = CURVE_WORDS.get(curve.quantity, (f"{curve.x_name} [{curve.x_unit}]", f"{curve.y_name} [{curve.y_unit}]"))
    lo, hi = number(curve.x.min()), number(curve.x.max())
    lines = [f"  {yw.split(' [')[0]} from the {curve.basis}: {counted(curve.x.size, 'point')}, {xw.split(' [')[0]} "
             f"{lo if lo == hi else f'{lo}–{hi}'} {curve.x_unit}"]
    caveats = curve.caveats(number)
    n = int(curve.flags.sum())
    if table:
        lines.append(f"    {xw:>24}  {yw:>36}")
        for x, y, f in zip(curve.x, curve.y, curve.flags):
            y_text = number(y, 4) if math.isfinite(float(y)) else "–"
            lines.append(f"    {number(x, 4):>24}  {y_text:>36}" + ("  *" if f else ""))
        if n:
            lines.append("    * an extrapolation: beyond the measured range, or (in time) over 5 % from outside the "
                         "supported window")
    return "\n".join(lines), caveats


def diagnosis_text(diag: Any) -> tuple[str, list[str]]:
    """The diagnosis in words, and its notes as caveats.

    The verdict, its statement, the numbers that mean something for the verdict (units on their intervals), the
    fits, and the evidence as sentences with rounded numbers.
    """
    from ..analysis.diagnosis.diagnose import Diagnosis
    from ..output.diagnosis_words import entanglement_lines, fit_words
    from ..output.words import VERDICT_WORDS, evidence_line, key_numbers, plain_words

    d = diag.to_dict() if isinstance(diag, Diagnosis) else dict(diag)
    verdict = str(d.get("verdict", ""))
    lines = [f"{d.get('sample', '')}: {verdict.upper()} — {VERDICT_WORDS.get(verdict, verdict)}"]
    if d.get("statement"):
        lines.append(f"  {plain_words(d['statement'])}")
    if d.get("reason"):
        lines.append(f"  reason: {plain_words(d['reason'])}")
    lines += [f"  {quantity(k, v, ci)}" for k, v, ci in key_numbers(d) if number(v) != "–"]
    lines += [f"    {line}" for line in entanglement_lines(d)]
    fits = fit_words(d.get("fits") or {})
    if fits:
        lines.append(f"  fits (rms residual, BIC): {fits}")
    outcomes = [evidence_line(e) for e in d.get("evidence") or [] if isinstance(e, dict)]
    made = [(t, p) for t, p in outcomes if p is not None]
    lines.append(f"  evidence: {sum(p is True for _, p in made)} tests passed, {sum(p is False for _, p in made)} "
                 f"failed, {len(outcomes) - len(made)} not made on these data")
    lines += [f"    {'✓' if p else '✗'} {t}" for t, p in made]
    return "\n".join(lines), [plain_words(n) for n in d.get("notes") or []]
