"""Options of ``--bands`` (bootstrap confidence bands) for the commands that invert."""

from __future__ import annotations

import argparse
from typing import Any

from ..errors import SettingsError

__all__ = ["add_band_arguments", "band_settings", "band_fields"]


def add_band_arguments(p: argparse.ArgumentParser) -> None:
    """Add ``--bands``, ``--resamples``, ``--noise``, ``--seed``, ``--jobs`` and ``--level``."""
    g = p.add_argument_group("confidence bands (bootstrap)")
    g.add_argument("--bands", action="store_true", help="add a pointwise confidence band of H(τ) and intervals")
    g.add_argument("--resamples", type=int, default=200, metavar="N", help="number of resampled sweeps (200)")
    g.add_argument("--noise", type=float, default=None, metavar="X",
                   help="known relative noise of G' and G'' (e.g. 0.02); estimated from the residuals if omitted")
    g.add_argument("--seed", type=int, default=0, metavar="N", help="seed of the resampling (0)")
    g.add_argument("--jobs", type=int, default=1, metavar="N", help="worker processes (1)")
    g.add_argument("--level", type=float, default=0.95, metavar="P", help="confidence level (0.95)")
    g.add_argument("--band-method", default="residual", choices=["residual", "parametric"],
                   help="resample the residuals (default) or draw Gaussian noise")
    g.add_argument("--band-strength", default="fixed", choices=["fixed", "rechosen"],
                   help="keep λ at the original choice on every resample (default) or re-choose it")
    g.add_argument("--band-statistics", default=None, metavar="NAME[,NAME...]",
                   help="numbers to give intervals for (eta_s, G_e, derived, modes, rouse, bead_spring); "
                        "default: eta_s or G_e as fitted, and derived")


def band_settings(args: argparse.Namespace) -> dict[str, Any]:
    """Keyword arguments for :func:`tauspec.uncertainty.confidence_bands` from the parsed options."""
    if args.resamples < 10:
        raise SettingsError(f"--resamples must be at least 10, not {args.resamples}")
    if not 0.5 <= args.level < 1:
        raise SettingsError(f"--level must lie in [0.5, 1), not {args.level}")
    if args.jobs < 1:
        raise SettingsError(f"--jobs must be at least 1, not {args.jobs}")
    if args.seed < 0:
        raise SettingsError(f"--seed must be nonnegative, not {args.seed}")
    if args.noise is not None and not 0 < args.noise <= 0.2:
        raise SettingsError(f"--noise must be a relative size in (0, 0.2], not {args.noise}")
    statistics = None
    if args.band_statistics is not None:
        from ..analysis.uncertainty.statistics import STATISTICS

        statistics = [name.strip() for name in args.band_statistics.split(",") if name.strip()]
        unknown = sorted(set(statistics) - set(STATISTICS))
        if unknown:
            raise SettingsError(f"--band-statistics: unknown {unknown}; choose from {sorted(STATISTICS)}")
    return {"resamples": args.resamples, "noise": args.noise, "seed": args.seed, "jobs": args.jobs,
            "level": args.level, "method": args.band_method, "strength_mode": args.band_strength,
            "statistics": statistics}


def band_fields(bands: Any) -> dict[str, Any]:
    """The keys ``--bands`` adds to a spectrum's JSON object."""
    d = bands.to_dict()
    return {"H_lo": d["H_lo"], "H_hi": d["H_hi"], "band_level": d["level"], "band_method": d["description"],
            "band_noise": d["noise"], "band_resamples": d["n_resamples"], "band_failed": d["n_failed"],
            "band_seed": d["seed"], "intervals": d["intervals"]}
