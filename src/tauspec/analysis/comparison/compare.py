"""Comparing relaxation spectra between samples and along a series.

For two spectra A and B, :func:`fit_shift` finds the time-shift factor a and
the modulus-shift factor b of

    H_B(τ) ≈ b · H_A(τ/a)

by weighted least squares in ℓ = ln(H + ε) on the overlap of the two supported
windows after the shift; the weighted mean square residual left after the
shift is the *shape distance*.  Whether it is larger than the noise alone would
give is decided by a test whose null distribution comes from replicate spectra
of each sample (parametric resampling: the fitted moduli re-noised at the
sample's own noise level and inverted again with the same settings).
:func:`compare` does this for every pair (or every sample against a
reference), ranks the pairs, and fits power laws τ ∝ M^x and G ∝ c^y M^z
along a series.  The method, the statistic and its null distribution are in
``docs/compare.md``.

References
----------
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, ch. 9 (Rouse: τ_R ∝ M²,
G0 = cRT/M, J_e⁰ = 2M/(5cRT)) and ch. 11 (shift factors).
Efron, B. & Tibshirani, R. J. (1993). *An Introduction to the Bootstrap*, Chapman & Hall, ch. 6 (parametric
bootstrap standard errors).
Satterthwaite, F. E. (1946). Biometrics Bull. 2:110; Box, G. E. P. (1954). Ann. Math. Stat. 25:290 (a quadratic
form in Gaussian variables approximated by a scaled χ² with matched mean and variance).
Davies, A. R. & Anderssen, R. S. (1997). J. Non-Newtonian Fluid Mech. 73:163 (the supported window).
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from ...data.sweep import Sweep
from ...errors import SettingsError
from ...spectrum.invert import invert
from ...spectrum.result import Spectrum
from ..diagnosis.diagnose import diagnose as diagnose_sweep
from .replicates import LOG_FLOOR, N_REPLICATES, _sweep_of, sample_uncertainty
from .series import PowerLaw, characteristic_modulus, characteristic_time, series_scaling
from .shape import CI_LEVEL, LEVEL, PairComparison, _compare_pair, _null_distances, rouse_ratios
from .shift import MIN_OVERLAP

__all__ = ["SCHEMA", "Comparison", "compare"]


#: Version of the JSON form of a Comparison.
SCHEMA = "tauspec.comparison/1"


@dataclasses.dataclass(frozen=True, kw_only=True)
class Comparison:
    """Several spectra compared pairwise (or against a reference), ranked, and scaled along a series."""

    samples: tuple[Mapping[str, Any], ...]
    pairs: tuple[PairComparison, ...]
    ranking: tuple[int, ...]
    reference: str | None
    series: Mapping[str, PowerLaw]
    settings: Mapping[str, Any]
    spectra: tuple[Spectrum, ...] = ()
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form (keys are a public contract: add, never rename)."""
        return {
            "schema": SCHEMA,
            "samples": [dict(s) for s in self.samples],
            "reference": self.reference,
            "pairs": [p.to_dict() for p in self.pairs],
            "ranking": [{"a": self.pairs[i].a, "b": self.pairs[i].b,
                         "shape_distance": self.pairs[i].shape_distance} for i in self.ranking],
            "series": {k: v.to_dict() for k, v in self.series.items()},
            "settings": dict(self.settings),
            "notes": list(self.notes),
        }

    def report(self) -> str:
        """Return a text summary: the pairs ranked by shape distance, then the series fits."""
        lines = [f"{len(self.samples)} samples compared" + (f" against {self.reference}" if self.reference else
                                                             " pairwise")]
        for i in self.ranking:
            p = self.pairs[i]
            verdict = {True: "same shape", False: "different shape", None: "shape not tested"}[p.same_shape]
            lines.append(
                f"  {p.b} vs {p.a}: a = {_g(p.time_shift)} [{_g(p.time_shift_ci[0])}, {_g(p.time_shift_ci[1])}], "
                f"b = {_g(p.modulus_shift)} [{_g(p.modulus_shift_ci[0])}, {_g(p.modulus_shift_ci[1])}], "
                f"D² = {_g(p.shape_distance)}, p = {_g(p.p_value)}: {verdict}")
            if p.rouse:
                r = p.rouse
                lines.append(f"    Rouse: τ_R ratio {_g(r['tau_R_ratio'])} {_ci(r['tau_R_ratio_ci'])}, "
                             f"G0 ratio {_g(r['G0_ratio'])} {_ci(r['G0_ratio_ci'])}")
            lines += [f"    note: {n}" for n in p.notes]
        for fit in self.series.values():
            lines.append(fit.report())
        lines += [f"  note: {n}" for n in self.notes]
        return "\n".join(lines)


def _g(v: Any) -> str:
    return "n/a" if v is None or not math.isfinite(float(v)) else f"{float(v):.4g}"


def _ci(ci: Sequence[float]) -> str:
    return f"[{_g(ci[0])}, {_g(ci[1])}]"


# ----------------------------------------------------------------------------------------- compare
def _label(spectrum: Spectrum, used: set[str]) -> str:
    base = spectrum.sample or spectrum.source or "sample"
    name, k = base, 2
    while name in used:
        name, k = f"{base} ({k})", k + 1
    used.add(name)
    return name


def compare(
    results: Sequence[Spectrum | Sweep],
    *,
    labels: Sequence[str] | None = None,
    reference: int | str | None = None,
    metadata: Sequence[Mapping[str, float | None]] | None = None,
    replicates: int = N_REPLICATES,
    level: float = LEVEL,
    seed: int = 0,
    diagnose: bool = False,
    diagnoses: Sequence[Any] | None = None,
    bands: Sequence[tuple[np.ndarray, np.ndarray] | None] | None = None,
    invert_settings: Mapping[str, Any] | None = None,
    min_overlap: float = MIN_OVERLAP,
    reselect: bool = True,
) -> Comparison:
    """Compare relaxation spectra: shifts, shape distances and their test, ranking and series scaling.

    Parameters
    ----------
    results : sequence of Spectrum or Sweep
        Two or more samples; sweeps are inverted with ``invert_settings``.
    labels : sequence of str, optional
        Names of the samples (default: the sample names, made unique).
    reference : int or str, optional
        Compare every sample against this one (index or label) instead of all pairs.
    metadata : sequence of mappings, optional
        Per sample ``{"M": .., "c": .., "T": ..}``; missing entries are read from the metadata of the sweep
        (``molecular_weight``, ``concentration``, ``temperature``).
    replicates : int
        Replicate spectra per sample (parametric resampling) for the null distribution of the shape distance
        and the intervals of a and b; 0 skips the test (``same_shape`` is then None).
    level : float
        Level of the shape test.
    seed : int
        Seed of the resampling (combined with each sample's data, so the order of samples does not matter).
    diagnose : bool
        Run the bead-spring diagnosis on every sample (when this installation has it) for the Rouse ratios
        and the series; ``diagnoses`` gives them precomputed instead.
    bands : sequence, optional
        Per sample a band of H on its grid — (lo, hi) read as a 95 % interval, or an object with ``H_lo``,
        ``H_hi`` and ``level`` — used for the weights (None for a sample without one).
    invert_settings : mapping, optional
        Keyword arguments of :func:`tauspec.spectrum.invert` for sweeps.
    min_overlap : float
        Smallest overlap of the windows after the shift, as a fraction of the narrower window.
    reselect : bool
        Re-choose the strength on every replicate by the sample's own rule (the default), dropping replicates
        whose strength lies a decade from the replicates' median; False keeps each sample's own strength
        (see docs/compare.md).

    Returns
    -------
    Comparison

    References
    ----------
    See the module docstring and ``docs/compare.md``.
    """
    if len(results) < 2:
        raise SettingsError(f"compare needs at least two samples, not {len(results)}")
    if not 0 < level < 1:
        raise SettingsError(f"level must lie between 0 and 1, not {level}")
    if not 0 < min_overlap <= 1:
        raise SettingsError(f"min_overlap must lie in (0, 1], not {min_overlap}")
    spectra: list[Spectrum] = []
    for r in results:
        if isinstance(r, Sweep):
            spectra.append(invert(r, **dict(invert_settings or {})))
        elif isinstance(r, Spectrum):
            spectra.append(r)
        else:
            raise SettingsError(f"compare takes Spectrum or Sweep objects, not {type(r).__name__}")
    n = len(spectra)
    used: set[str] = set()
    names = list(labels) if labels is not None else [_label(s, used) for s in spectra]
    if len(names) != n or len(set(names)) != n:
        raise SettingsError("labels must be unique, one per sample")
    ref: int | None = None
    if reference is not None:
        if isinstance(reference, str):
            if reference not in names:
                raise SettingsError(f"reference {reference!r} is not one of the samples {names}")
            ref = names.index(reference)
        else:
            ref = int(reference)
            if not 0 <= ref < n:
                raise SettingsError(f"reference index {ref} out of range")

    meta = [dict(m or {}) for m in metadata] if metadata is not None else [{} for _ in spectra]
    if len(meta) != n:
        raise SettingsError("metadata must have one mapping per sample")
    M, c, T = [], [], []
    for s, md in zip(spectra, meta):
        sw = _sweep_of(s)
        M.append(md.get("M") if md.get("M") is not None else sw.meta_number("molecular_weight"))
        c.append(md.get("c") if md.get("c") is not None else sw.meta_number("concentration"))
        T.append(md.get("T") if md.get("T") is not None else sw.meta_number("temperature", kind="temperature"))

    notes: list[str] = []
    if diagnoses is None and diagnose:
        diagnoses = [diagnose_sweep(_sweep_of(s), spectrum=s) for s in spectra]
    if diagnoses is not None and len(diagnoses) != n:
        raise SettingsError("diagnoses must have one entry per sample")

    band_list = list(bands) if bands is not None else [None] * n
    unc = [sample_uncertainty(s, replicates=replicates, seed=seed, band=b, reselect=reselect)
           for s, b in zip(spectra, band_list)]
    nulls = [_null_distances(u, min_overlap) for u in unc]
    index_pairs = [(ref, j) for j in range(n) if j != ref] if ref is not None else \
        list(itertools.combinations(range(n), 2))
    pairs = []
    for i, j in index_pairs:
        pc = _compare_pair(names[i], names[j], unc[i], unc[j], np.concatenate([nulls[i], nulls[j]]), level,
                           min_overlap)
        if diagnoses is not None:
            pc = dataclasses.replace(pc, rouse=rouse_ratios(diagnoses[i], diagnoses[j]))
        pairs.append(pc)
    ranking = tuple(sorted(range(len(pairs)), key=lambda k: (not math.isfinite(pairs[k].shape_distance),
                                                             pairs[k].shape_distance)))
    series = series_scaling(spectra, M, c, diagnoses=diagnoses)
    samples = []
    for k, (s, u) in enumerate(zip(spectra, unc)):
        d = diagnoses[k] if diagnoses is not None else None
        samples.append({
            "label": names[k], "sample": s.sample, "source": s.source, "window": list(s.window),
            "M": M[k], "c": c[k], "T": T[k], "noise": u.noise, "uncertainty": u.source,
            "tau_w": characteristic_time(s), "G_w": characteristic_modulus(s),
            "verdict": getattr(d, "verdict", None),
            "tau_R": getattr(d, "tau_R", None), "G0": getattr(d, "G0", None),
        })
    settings = {"replicates": replicates, "level": level, "seed": seed, "min_overlap": min_overlap,
                "strength": "re-chosen per replicate" if reselect else "fixed at each sample's own",
                "log_floor": LOG_FLOOR, "ci_level": CI_LEVEL, "mode": "reference" if ref is not None else "all pairs"}
    return Comparison(samples=tuple(samples), pairs=tuple(pairs), ranking=ranking,
                      reference=names[ref] if ref is not None else None, series=series, settings=settings,
                      spectra=tuple(spectra), notes=tuple(notes))
