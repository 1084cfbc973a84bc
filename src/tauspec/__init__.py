"""tauspec: relaxation spectra from oscillatory shear frequency sweeps.

The public functions are loaded on first use, so ``import tauspec`` is cheap
and imports neither cvxpy nor matplotlib.
"""

from __future__ import annotations

import importlib
from typing import Any

__version__ = "0.1.0"

# public name -> module that defines it
_EXPORTS = {
    "Sweep": "sweep",
    "read_sweep": "io",
    "parse_sweep_text": "io",
    "TauspecError": "errors",
    "SweepError": "errors",
    "SettingsError": "errors",
    "TauspecWarning": "errors",
    "WeakResultWarning": "errors",
    "DroppedPointsWarning": "errors",
    "invert": "spectrum",
    "Spectrum": "spectrum",
    "confidence_bands": "uncertainty",
    "estimate_noise": "uncertainty",
    "Bands": "uncertainty",
    "run_batch": "batch",
    "diagnose": "diagnosis",
    "Diagnosis": "diagnosis",
    "superpose": "superpose",
    "MasterCurve": "superpose",
    "compare": "compare",
    "Comparison": "compare",
    "supported_window": "spectrum",
    "fit_modes": "modes",
    "Modes": "modes",
    "write_modes_csv": "modes",
    "derive": "derived",
    "Derived": "derived",
    "side_by_side": "derived",
    "retardation_spectrum": "derived",
    "relaxation_modulus": "derived",
    "creep_compliance": "derived",
    "complex_viscosity": "derived",
    "shear_viscosity": "derived",
}

__all__ = sorted(_EXPORTS) + ["__version__"]


def __getattr__(name: str) -> Any:
    if name in _EXPORTS:
        module = importlib.import_module(f".{_EXPORTS[name]}", __name__)
        return getattr(module, name)
    raise AttributeError(f"module 'tauspec' has no attribute {name!r}")


def __dir__() -> list[str]:
    return __all__
