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
