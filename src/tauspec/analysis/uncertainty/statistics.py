"""Numbers computed on every resampled sweep (η_s, G_e, derived numbers, modes, Rouse parameters): the registry."""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Iterable, Mapping
from typing import Any

import numpy as np

from ...data.sweep import Sweep
from ...errors import SettingsError, TauspecError
from ...spectrum.result import Spectrum

__all__ = ["Statistic", "STATISTICS", "register_statistic"]


# --------------------------------------------------------------------------- statistics
@dataclasses.dataclass(frozen=True)
class Statistic:
    """A number (or several) computed from a resampled sweep and its spectrum.

    ``fn(sweep, spectrum)`` returns a float or a mapping of names to floats
    (NaN when it cannot be computed on that resample).  ``nonnegative``
    clips the basic interval at 0.  ``positive`` marks a number positive by its nature (a time, a viscosity, a
    compliance, a modulus): its interval is formed on its logarithm and transformed back, so that it stays
    positive (:func:`~tauspec.analysis.uncertainty.bands.confidence_bands`).  ``applies(spectrum)`` says whether the
    statistic is meaningful for a spectrum (e.g. G_e only with a plateau);
    ``default=False`` statistics are computed only when asked for by name
    (they are costly, or meaningful only for some samples).
    """

    fn: Callable[[Sweep, Spectrum], float | Mapping[str, float]]
    description: str
    nonnegative: bool = False
    applies: Callable[[Spectrum], bool] | None = None
    default: bool = True
    positive: bool = False


def _eta_s(sweep: Sweep, spectrum: Spectrum) -> float:
    return spectrum.eta_s


def _G_e(sweep: Sweep, spectrum: Spectrum) -> float:
    return spectrum.G_e


def _fits_eta_s(spectrum: Spectrum) -> bool:
    return spectrum.options.solvent and spectrum.options.eta_s is None


def _fits_G_e(spectrum: Spectrum) -> bool:
    return spectrum.options.equilibrium_modulus


_DERIVED = ("eta0", "Je0", "tau_n", "tau_w", "tau_longest")


def _derived(sweep: Sweep, spectrum: Spectrum) -> dict[str, float]:
    from ...modes.derived import derive

    d = derive(spectrum)
    return {k: getattr(d, k) for k in _DERIVED}


def _modes(sweep: Sweep, spectrum: Spectrum) -> dict[str, float]:
    from ...modes.derived import derive
    from ...modes.fit import fit_modes
    from ...modes.options import ModesOptions

    modes = fit_modes(sweep, spectrum, ModesOptions.like(spectrum.options))
    d = derive(modes)
    return {"n_modes": float(modes.n_modes), **{f"modes_{k}": getattr(d, k) for k in _DERIVED}}


def _rouse(sweep: Sweep, spectrum: Spectrum) -> dict[str, float]:
    from ...models.beadspring import fit_chain

    fit = fit_chain(sweep.omega, sweep.storage, sweep.loss, "rouse", solvent=_fits_eta_s(spectrum))
    return {"tau_R": fit.tau1, "G0": fit.G0}


def _bead_spring(sweep: Sweep, spectrum: Spectrum) -> dict[str, float]:
    from ..diagnosis.diagnose import diagnose

    d = diagnose(sweep, spectrum=spectrum, solvent=_fits_eta_s(spectrum), intervals=False)
    return {"tau_R": d.tau_R, "G0": d.G0, "a": d.alpha}


#: The registry of statistics (name → Statistic); those with ``default=True`` are computed on every band.
STATISTICS: dict[str, Statistic] = {
    "eta_s": Statistic(_eta_s, "solvent viscosity η_s (Pa·s) of the inversion", True, _fits_eta_s),
    "G_e": Statistic(_G_e, "equilibrium modulus G_e (Pa) of the inversion", True, _fits_G_e),
    "derived": Statistic(_derived, "η0, J_e⁰, τ_n, τ_w and the longest time of the spectrum (tauspec.derive)",
                         True, positive=True),
    "modes": Statistic(_modes, "number of Maxwell modes and the derived numbers from them (tauspec.fit_modes, "
                       "then tauspec.derive); single modes are not compared across resamples, whose "
                       "count may differ", True, None, False),
    "rouse": Statistic(_rouse, "τ_R = τ_1 (s) and G0 (Pa) of the finite-N Rouse fit "
                       "(tauspec.models.beadspring.fit_chain)",
                       True, None, False, positive=True),
    "bead_spring": Statistic(_bead_spring, "τ_R (s), G0 (Pa) of the reported model and the mode exponent a of the "
                             "bead-spring diagnosis (tauspec.diagnose, without its own intervals)",
                             True, None, False, positive=True),
}


def register_statistic(name: str, statistic: Statistic) -> None:
    """Add a statistic to :data:`STATISTICS` so that every band computes its interval by default."""
    if not name or not isinstance(statistic, Statistic):
        raise SettingsError(f"a statistic needs a name and a Statistic, not {name!r}: {statistic!r}")
    STATISTICS[name] = statistic


def _resolve_statistics(spectrum: Spectrum, statistics: Any) -> dict[str, Statistic]:
    if statistics is None:
        return {k: v for k, v in STATISTICS.items() if v.default and (v.applies is None or v.applies(spectrum))}
    out: dict[str, Statistic] = {}
    items: Iterable[tuple[str, Any]]
    if isinstance(statistics, Mapping):
        items = statistics.items()
    else:
        items = ((name, None) for name in statistics)
    for name, value in items:
        if value is None:
            if name not in STATISTICS:
                raise SettingsError(f"unknown statistic {name!r}; known: {sorted(STATISTICS)}")
            value = STATISTICS[name]
        elif callable(value) and not isinstance(value, Statistic):
            value = Statistic(value, f"user statistic {name}")
        if not isinstance(value, Statistic):
            raise SettingsError(f"statistic {name!r} must be a callable or a Statistic")
        out[str(name)] = value
    return out


def _evaluate(stats: Mapping[str, Statistic], sweep: Sweep, spectrum: Spectrum,
              owners: dict[str, str] | None = None) -> dict[str, float]:
    """Evaluate every statistic; a mapping-valued one reports each of its keys (``owners`` records whose)."""
    values: dict[str, float] = {}
    for name, st in stats.items():
        try:
            v = st.fn(sweep, spectrum)
        except (TauspecError, ValueError, ArithmeticError, np.linalg.LinAlgError):
            v = math.nan  # not computable on this resample
        if isinstance(v, Mapping):
            for key, x in v.items():
                values[str(key)] = _as_float(x)
                if owners is not None:
                    owners[str(key)] = name
        else:
            values[name] = _as_float(v)
            if owners is not None:
                owners[name] = name
    return values


def _as_float(x: Any) -> float:
    try:
        return float(x)
    except (TypeError, ValueError):
        return math.nan
