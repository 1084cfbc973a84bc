"""The JSON form of whole results as the commands and the batch store them.

A stored result is one JSON object: the spectrum's keys at the top (``tauspec invert --out``) or wrapped in a
batch result (``spectrum``, ``modes``, ``modes_fit``, ``derived``, ``derived_spectrum``, ``diagnosis``).  This
module assembles those entries and reads them back.
"""

from __future__ import annotations

from typing import Any

from ..modes.derived import derive

__all__ = ["modes_entries"]


def modes_entries(modes: Any, spectrum: Any) -> dict[str, Any]:
    """The entries of a result for fitted Maxwell modes started from ``spectrum``.

    ``modes`` ({g, tau, g_se, tau_se}), ``modes_fit`` (flags, window, count rule), ``derived`` (from the modes)
    and ``derived_spectrum`` (the same numbers from the continuous spectrum).
    """
    return {"modes": modes.to_dict(), "modes_fit": modes.details(), "derived": derive(modes).to_dict(),
            "derived_spectrum": derive(spectrum).to_dict()}
