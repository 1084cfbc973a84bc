"""tauspec: relaxation spectra from oscillatory shear frequency sweeps.

The public functions are loaded on first use, so ``import tauspec`` is cheap
and imports neither cvxpy nor matplotlib.
"""

from __future__ import annotations

import importlib
from typing import Any

from ._version import __version__

# public name -> module that defines it
_EXPORTS = {
    "Sweep": "data.sweep",
    "read_sweep": "data.read",
    "read_sweeps": "data.read",
    "parse_sweep_text": "data.read",
    "ReadOptions": "data.read",
    "parse_sweeps_text": "data.read",
    "TauspecError": "errors",
    "SweepError": "errors",
    "SettingsError": "errors",
    "TauspecWarning": "errors",
    "WeakResultWarning": "errors",
    "DroppedPointsWarning": "errors",
    "EncodingGuessWarning": "errors",
    "invert": "spectrum.invert",
    "Spectrum": "spectrum.result",
    "supported_window": "spectrum.window",
    "confidence_bands": "analysis.uncertainty.bands",
    "estimate_noise": "analysis.uncertainty.noise",
    "Bands": "analysis.uncertainty.bands",
    "run_batch": "batch.run",
    "diagnose": "analysis.diagnosis.diagnose",
    "Diagnosis": "analysis.diagnosis.diagnose",
    "superpose": "analysis.superposition.master",
    "MasterCurve": "analysis.superposition.master",
    "compare": "analysis.comparison.compare",
    "Comparison": "analysis.comparison.compare",
    "fit_modes": "modes.fit",
    "Modes": "modes.result",
    "write_modes_csv": "output.tables",
    "derive": "modes.derived",
    "Derived": "modes.derived",
    "side_by_side": "modes.derived",
    "retardation_spectrum": "modes.retardation",
    "relaxation_modulus": "modes.curves",
    "creep_compliance": "modes.curves",
    "complex_viscosity": "modes.curves",
    "shear_viscosity": "modes.curves",
    # figures (matplotlib, loaded on first use): each takes an optional axes and returns it
    "plot_fit": "output.figures.spectrum",
    "plot_residuals": "output.figures.spectrum",
    "plot_spectrum": "output.figures.spectrum",
    "plot_lcurve": "output.figures.spectrum",
    "plot_diagnosis": "output.figures.diagnosis",
    "plot_master": "output.figures.master",
    "plot_overlay": "output.figures.overlay",
    "plot_series": "output.figures.overlay",
    "plot_curve": "output.figures.curve",
    "save_figure": "output.figures.style",
}

__all__ = sorted(_EXPORTS) + ["__version__"]


def __getattr__(name: str) -> Any:
    if name in _EXPORTS:
        module = importlib.import_module(f".{_EXPORTS[name]}", __name__)
        return getattr(module, name)
    raise AttributeError(f"module 'tauspec' has no attribute {name!r}")


def __dir__() -> list[str]:
    return __all__
