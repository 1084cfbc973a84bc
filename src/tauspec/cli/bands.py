"""Options of ``--bands`` (bootstrap confidence bands) for the commands that invert."""

from __future__ import annotations

import argparse
from typing import Any

from ..analysis.uncertainty.options import BandOptions
from ..errors import SettingsError
from .options import add_options, options_from_args

__all__ = ["add_band_arguments", "band_settings", "band_fields", "run_bands"]


def add_band_arguments(p: argparse.ArgumentParser) -> None:
    """Add ``--bands`` and the fields of :class:`~tauspec.analysis.uncertainty.options.BandOptions`."""
    g = p.add_argument_group("confidence bands (bootstrap)")
    g.add_argument("--bands", action="store_true", help="add a pointwise confidence band of H(τ) and intervals")
    add_options(g, BandOptions)


def band_settings(args: argparse.Namespace) -> BandOptions:
    """The band options from the parsed arguments; statistic names are checked against the registry."""
    from ..analysis.uncertainty.statistics import STATISTICS

    options = options_from_args(args, BandOptions)
    unknown = sorted(set(options.statistics or ()) - set(STATISTICS))
    if unknown:
        raise SettingsError(f"--band-statistics: unknown {unknown}; choose from {sorted(STATISTICS)}")
    return options


def band_fields(bands: Any) -> dict[str, Any]:
    """The keys ``--bands`` adds to a spectrum's JSON object."""
    d = bands.to_dict()
    return {"H_lo": d["H_lo"], "H_hi": d["H_hi"], "band_level": d["level"], "band_method": d["description"],
            "band_noise": d["noise"], "band_resamples": d["n_resamples"], "band_failed": d["n_failed"],
            "band_seed": d["seed"], "intervals": d["intervals"]}


def run_bands(spectrum: Any, options: BandOptions, args: argparse.Namespace) -> Any:
    """The confidence bands of one spectrum, with a progress bar in a terminal (see ``progress_bar``)."""
    from ..analysis.uncertainty.bands import confidence_bands
    from .common import progress_bar

    bar = progress_bar(args, options.resamples, "resample", desc=f"{spectrum.sample}: bands")
    try:
        return confidence_bands(spectrum, options, progress=None if bar is None else bar.update)
    finally:
        if bar is not None:
            bar.close()
