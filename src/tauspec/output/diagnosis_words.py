"""The bead-spring fits of a diagnosis in words (for the text summary and the report)."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from .words import number

__all__ = ["MODEL_WORDS", "fit_words"]

#: Words for the bead-spring models of a diagnosis (their keys in ``fits``).
MODEL_WORDS = {"rouse": "Rouse", "rouse_continuum": "Rouse, continuum form", "zimm_theta": "Zimm θ",
               "zimm_good": "Zimm good solvent", "zimm_theta_discrete": "Zimm θ, discrete form",
               "zimm_good_discrete": "Zimm good solvent, discrete form", "general_sine": "free exponent",
               "general_power": "free exponent, power law"}


def fit_words(fits: Mapping[str, Any]) -> str:
    """``Rouse 1.5 %, −670; Zimm good solvent 5.9 %, −447; ...``: each fit's rms residual and BIC, best first."""
    rows = []
    for name, f in fits.items():
        f = f if isinstance(f, Mapping) else f.to_dict()
        rows.append((f.get("bic"), MODEL_WORDS.get(name, name.replace("_", " ")), f.get("rms")))
    rows.sort(key=lambda r: (r[0] is None, r[0] if r[0] is not None else 0.0))
    return "; ".join(f"{words} {100 * float(rms):.1f} %, {number(bic)}" for bic, words, rms in rows
                     if rms is not None)


#: Words for the estimators of the plateau modulus (``entanglement.estimates[].method``).
ESTIMATOR_WORDS = {"bsw_fit": "BSW fit", "spectrum_integral": "integral of the spectrum over the entanglement zone",
                   "loss_peak_integral": "integral of the terminal loss peak", "tan_delta_minimum":
                   "G′ at the minimum of tan δ"}


def _estimator(method: Any) -> str:
    return ESTIMATOR_WORDS.get(str(method), str(method).replace("_", " "))


def entanglement_lines(diag: Mapping[str, Any]) -> list[str]:
    """The plateau modulus's estimator and the others beside it, τ_d's method, M_e's convention and Z, in words.

    Empty unless the diagnosis carries its ``entanglement`` object (an entangled verdict).
    """
    from .words import is_finite_number, plain_words, quantity

    e = diag.get("entanglement")
    if not isinstance(e, Mapping):
        return []
    lines = []
    if e.get("GN0_method"):
        source = next((x.get("source") for x in e.get("estimates") or [] if x.get("method") == e["GN0_method"]), "")
        lines.append(f"G_N⁰ by the {_estimator(e['GN0_method'])}" + (f" ({source})" if source else ""))
    others = [x for x in e.get("estimates") or [] if x.get("method") != e.get("GN0_method")]
    if others:
        lines.append("beside it: " + "; ".join(f"{quantity('GN0', x.get('value'), x.get('ci'))} by the "
                                               f"{_estimator(x.get('method'))}" for x in others))
    if e.get("tau_d_method"):
        lines.append(f"τ_d: {plain_words(e['tau_d_method'])}")
    if is_finite_number(diag.get("Me")) and e.get("Me_convention"):
        convention = str(e["Me_convention"]).removeprefix("M_e = ")
        lines.append(f"M_e = {plain_words(convention)}; its interval is G_N⁰'s, with the density, temperature and "
                     "molecular weight taken as exact")
    elif not is_finite_number(diag.get("Me")) and is_finite_number(diag.get("GN0")):
        lines.append("M_e: needs the density and the temperature in the sweep's metadata")
    return lines
