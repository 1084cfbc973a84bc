"""The JSON form of whole results as the commands and the batch store them.

A stored result is one JSON object: the spectrum's keys at the top (``tauspec invert --out``) or wrapped in a
batch result (``spectrum``, ``modes``, ``modes_fit``, ``derived``, ``derived_spectrum``, ``diagnosis``).  This
module assembles those entries and reads them back.
"""

from __future__ import annotations

import math
import types
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from ..errors import TauspecError
from ..modes.derived import derive
from ..spectrum.result import SCHEMA as SPECTRUM_SCHEMA
from ..spectrum.result import LCurve, Spectrum

__all__ = ["modes_entries", "spectrum_from_dict", "diagnosis_from_dict"]


def modes_entries(modes: Any, spectrum: Any) -> dict[str, Any]:
    """The entries of a result for fitted Maxwell modes started from ``spectrum``.

    ``modes`` ({g, tau, g_se, tau_se}), ``modes_fit`` (flags, window, count rule), ``derived`` (from the modes)
    and ``derived_spectrum`` (the same numbers from the continuous spectrum).
    """
    return {"modes": modes.to_dict(), "modes_fit": modes.details(), "derived": derive(modes).to_dict(),
            "derived_spectrum": derive(spectrum).to_dict()}


def spectrum_from_dict(d: Mapping[str, Any], source: str = "<result>") -> Spectrum:
    """Rebuild a :class:`~tauspec.spectrum.Spectrum` from its JSON form (``Spectrum.to_dict()``).

    ``null`` in an array (a NaN or infinity when written) becomes NaN.

    Raises
    ------
    TauspecError
        When a key is missing or the schema is not a spectrum's.
    """
    if not isinstance(d, Mapping):
        raise TauspecError("not a spectrum result (expected a JSON object)", source)
    if d.get("schema") != SPECTRUM_SCHEMA and "status" in d:  # a batch result folder wraps the spectrum
        if not isinstance(d.get("spectrum"), Mapping):
            raise TauspecError(f"the stored result holds no spectrum (status {d.get('status')!r}"
                               + (f": {d['error']}" if d.get("error") else "") + ")", source)
        d = d["spectrum"]
    schema = d.get("schema")
    if schema != SPECTRUM_SCHEMA:
        raise TauspecError(f"not a spectrum result (schema {schema!r}, expected {SPECTRUM_SCHEMA!r})", source)

    def arr(obj: Any, key: str) -> np.ndarray:
        try:
            return np.array([math.nan if v is None else float(v) for v in obj[key]], dtype=float)
        except KeyError:
            raise TauspecError(f"spectrum result has no {key!r}", source) from None
        except (TypeError, ValueError):
            raise TauspecError(f"spectrum result: {key!r} is not a list of numbers", source) from None

    def num(obj: Any, key: str) -> float:
        try:
            v = obj[key]
        except KeyError:
            raise TauspecError(f"spectrum result has no {key!r}", source) from None
        try:
            return math.nan if v is None else float(v)
        except (TypeError, ValueError):
            raise TauspecError(f"spectrum result: {key!r} is not a number", source) from None

    lc = d.get("lcurve")
    if not isinstance(lc, Mapping):
        raise TauspecError("spectrum result has no 'lcurve'", source)
    lcurve = LCurve(strength=arr(lc, "lambda"), residual_norm=arr(lc, "residual_norm"),
                    solution_norm=arr(lc, "solution_norm"), curvature=arr(lc, "curvature"), gcv=arr(lc, "gcv"),
                    index=int(num(lc, "index")) if lc.get("index") is not None else 0, note=str(lc.get("note", "")))
    tau, H = arr(d, "tau"), arr(d, "H")
    omega = arr(d, "omega")
    if len(tau) != len(H) or len(tau) < 2 or np.any(~np.isfinite(tau)) or np.any(tau <= 0):
        raise TauspecError("spectrum result: 'tau' and 'H' must be equal-length lists of positive times", source)
    if not np.all(np.isfinite(H)):
        raise TauspecError("spectrum result: 'H' has missing or non-finite values", source)
    window = d.get("window")
    if not (isinstance(window, Sequence) and len(window) == 2):
        raise TauspecError("spectrum result: 'window' must be [tau_lo, tau_hi]", source)
    return Spectrum(
        tau=tau, H=H, strength=num(d, "lambda"), select=str(d.get("select", "")),
        window=(float(window[0]), float(window[1])), eta_s=num(d, "eta_s"), G_e=num(d, "G_e"),
        residual_rms=num(d, "residual_rms"), omega=omega, storage=arr(d, "storage"), loss=arr(d, "loss"),
        storage_fit=arr(d, "storage_fit"), loss_fit=arr(d, "loss_fit"), lcurve=lcurve,
        sample=str(d.get("sample", "sample")), source=str(d.get("source", source)),
        meta=dict(d.get("meta") or {}), warnings=tuple(d.get("warnings") or ()), settings=dict(d.get("settings") or {}),
    )


def diagnosis_from_dict(d: Mapping[str, Any]) -> Any:
    """The stored bead-spring diagnosis of a result (``result["diagnosis"]``) as an object, or None.

    Only the fields the comparison uses are kept: ``verdict``, ``tau_R``, ``tau_R_ci``, ``G0``, ``G0_ci``.
    """
    diag = d.get("diagnosis") if isinstance(d, Mapping) else None
    if not isinstance(diag, Mapping) or "verdict" not in diag:
        return None

    def value(key: str) -> float:
        v = diag.get(key)
        return math.nan if v is None else float(v)

    def interval(key: str) -> tuple[float, float]:
        ci = diag.get(key) or [None, None]
        return tuple(math.nan if v is None else float(v) for v in ci[:2])

    try:
        return types.SimpleNamespace(verdict=str(diag["verdict"]), tau_R=value("tau_R"), tau_R_ci=interval("tau_R_ci"),
                                     G0=value("G0"), G0_ci=interval("G0_ci"))
    except (TypeError, ValueError):
        return None
