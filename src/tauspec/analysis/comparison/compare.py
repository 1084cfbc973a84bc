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
from collections.abc import Callable, Mapping, Sequence
from typing import Any

import numpy as np

from ...data.record import field, record, resolve_options
from ...data.sweep import Sweep
from ...data.units import concentration, molar_mass
from ...errors import SettingsError
from ...rounding import number, telling_digits
from ...spectrum.invert import invert
from ...spectrum.options import InvertOptions
from ...spectrum.result import Spectrum
from ..diagnosis.diagnose import diagnose as diagnose_sweep
from .options import CompareOptions
from .replicates import LOG_FLOOR, sample_uncertainty
from .series import PowerLaw, characteristic_modulus, characteristic_time, series_scaling
from .shape import CI_LEVEL, PairComparison, _compare_pair, _null_distances, rouse_ratios

__all__ = ["Comparison", "compare"]


@record(schema="tauspec.comparison/1.1")
class Comparison:
    """Several spectra compared pairwise (or against a reference), ranked, and scaled along a series.

    ``ranking`` holds the indices of ``pairs`` by increasing shape distance (JSON: the pairs' names and
    distances); ``options`` are written as ``settings`` with the fixed constants of the method; ``spectra``
    (the compared spectra, for figures) stay in memory.
    """

    samples: tuple[Mapping[str, Any], ...]
    reference: str | None
    pairs: tuple[PairComparison, ...]
    ranking: tuple[int, ...]
    series: Mapping[str, PowerLaw]
    options: CompareOptions = field(key="settings", default_factory=CompareOptions)
    notes: tuple[str, ...] = ()
    spectra: tuple[Spectrum, ...] = field(transient=True, default=())

    def _json_out(self, d: dict[str, Any]) -> dict[str, Any]:
        d["ranking"] = [{"a": self.pairs[i].a, "b": self.pairs[i].b, "shape_distance": self.pairs[i].shape_distance}
                        for i in self.ranking]
        o = self.options
        d["settings"] = {"replicates": o.replicates, "significance": o.significance, "seed": o.seed,
                         "min_overlap": o.min_overlap, "min_decades": o.min_decades, "min_weight": o.min_weight,
                         "strength": _RESELECT_WORDS[o.reselect], "log_floor": LOG_FLOOR, "ci_level": CI_LEVEL,
                         "mode": "reference" if self.reference is not None else "all pairs"}
        return d

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        names = [(p.get("a"), p.get("b")) for p in d.get("pairs") or []]
        d["ranking"] = [names.index((r.get("a"), r.get("b"))) for r in d.get("ranking") or []]
        s = dict(d.get("settings") or {})
        d["settings"] = {"replicates": s.get("replicates", 12), "significance": s.get("significance", s.get("level")),
                         "seed": s.get("seed", 0), "min_overlap": s.get("min_overlap", 0.5),
                         "min_decades": s.get("min_decades", 1.5), "min_weight": s.get("min_weight", 0.5),
                         "reselect": s.get("strength") != _RESELECT_WORDS[False]}
        return d

    def report(self) -> str:
        """Return a text summary: the pairs ranked by shape distance, then the series fits."""
        lines = [f"{len(self.samples)} samples compared" + (f" against {self.reference}" if self.reference else
                                                             " pairwise")]
        for i in self.ranking:
            p = self.pairs[i]
            verdict = {True: "same shape", False: "different shape", None: "shape not tested"}[p.same_shape]
            # the test that decides (docs/compare.md 3b): the shifted moduli, when the overlap let them
            moduli_p = (p.moduli or {}).get("p_value") if p.same_shape is not None else None
            decided = f", p = {_g(moduli_p)} (moduli, deciding)" if moduli_p is not None else ""
            lines.append(
                f"  {p.b} vs {p.a}: a = {_value_ci(p.time_shift, p.time_shift_ci)}, "
                f"b = {_value_ci(p.modulus_shift, p.modulus_shift_ci)}, "
                f"D² = {_g(p.shape_distance)}, p = {_g(p.p_value)} (spectra){decided}: {verdict}")
            if p.rouse:
                r = p.rouse
                lines.append(f"    Rouse: τ_R ratio {_value_ci(r['tau_R_ratio'], r['tau_R_ratio_ci'])}, "
                             f"G0 ratio {_value_ci(r['G0_ratio'], r['G0_ratio_ci'])}")
            lines += [f"    note: {n}" for n in p.notes]
        for fit in self.series.values():
            lines.append(fit.report())
        lines += [f"  note: {n}" for n in self.notes]
        return "\n".join(lines)


def _g(v: Any, digits: int = 4) -> str:
    return "n/a" if v is None or not math.isfinite(float(v)) else number(v, digits)


def _value_ci(v: Any, ci: Sequence[float]) -> str:
    """A value and its interval, ``1 [0.9998, 1.0002]``.

    Four significant figures, more where an end would read as the value (the rule of the other texts,
    :func:`tauspec.rounding.telling_digits`).
    """
    d = telling_digits(v, ci, 4)
    return f"{_g(v, d)} [{_g(ci[0], d)}, {_g(ci[1], d)}]"


# ----------------------------------------------------------------------------------------- compare
def _label(spectrum: Spectrum, used: set[str]) -> str:
    base = spectrum.sample or spectrum.source or "sample"
    name, k = base, 2
    while name in used:
        name, k = f"{base} ({k})", k + 1
    used.add(name)
    return name


#: How the replicates' λ is chosen, in the words of the JSON settings.
_RESELECT_WORDS = {True: "re-chosen per replicate", False: "fixed at each sample's own"}


def compare(
    results: Sequence[Spectrum | Sweep],
    options: CompareOptions | None = None,
    *,
    labels: Sequence[str] | None = None,
    reference: int | str | None = None,
    metadata: Sequence[Mapping[str, float | None]] | None = None,
    diagnose: bool = False,
    diagnoses: Sequence[Any] | None = None,
    bands: Sequence[tuple[np.ndarray, np.ndarray] | None] | None = None,
    invert_options: InvertOptions | None = None,
    progress: Callable[[int], Any] | None = None,
    **changes: Any,
) -> Comparison:
    """Compare relaxation spectra: shifts, shape distances and their test, ranking and series scaling.

    Parameters
    ----------
    results : sequence of Spectrum or Sweep
        Two or more samples; sweeps are inverted with ``invert_options``.
    options : CompareOptions, optional
        Replicates, the size of the shape test, seed, smallest overlap, λ of the replicates
        (see :class:`~tauspec.analysis.comparison.options.CompareOptions`).
    labels : sequence of str, optional
        Names of the samples (default: the sample names, made unique).
    reference : int or str, optional
        Compare every sample against this one (index or label) instead of all pairs.
    metadata : sequence of mappings, optional
        Per sample ``{"M": .., "c": .., "T": ..}`` (M in g/mol, c as written, T in K); missing entries are read
        from the metadata of the sweep (``molecular_weight``, ``concentration``, ``temperature``), their units
        converted.
    diagnose : bool
        Run the bead-spring diagnosis on every sample for the Rouse ratios and the series; ``diagnoses`` gives
        them precomputed instead.
    bands : sequence, optional
        Per sample a band of H on its grid — (lo, hi) read as a 95 % interval, or an object with ``H_lo``,
        ``H_hi`` and ``level`` — used for the weights (None for a sample without one).
    invert_options : InvertOptions, optional
        How sweeps are inverted.
    progress : callable, optional
        Called with 1 after each sample's replicates are done (a progress bar's ``update``).
    **changes
        Fields of ``CompareOptions`` given directly (``compare([a, b], replicates=4)``).

    Returns
    -------
    Comparison

    References
    ----------
    See the module docstring and ``docs/compare.md``.
    """
    opts = resolve_options(CompareOptions, options, changes, "compare()")
    if len(results) < 2:
        raise SettingsError(f"compare needs at least two samples, not {len(results)}")
    spectra = [_as_spectrum(r, invert_options) for r in results]
    n = len(spectra)
    used: set[str] = set()
    names = list(labels) if labels is not None else [_label(s, used) for s in spectra]
    if len(names) != n or len(set(names)) != n:
        raise SettingsError("labels must be unique, one per sample")
    ref = _reference_index(reference, names)
    M, c, T = _series_variables(spectra, metadata)
    if diagnoses is None and diagnose:
        diagnoses = [diagnose_sweep(s.as_sweep(), spectrum=s) for s in spectra]
    if diagnoses is not None and len(diagnoses) != n:
        raise SettingsError("diagnoses must have one entry per sample")

    band_list = list(bands) if bands is not None else [None] * n
    unc = []
    for s, b in zip(spectra, band_list):
        unc.append(sample_uncertainty(s, replicates=opts.replicates, seed=opts.seed, band=b, reselect=opts.reselect))
        if progress is not None:
            progress(1)
    nulls = [_null_distances(u, opts.min_overlap) for u in unc]
    index_pairs = [(ref, j) for j in range(n) if j != ref] if ref is not None else \
        list(itertools.combinations(range(n), 2))
    pairs = []
    for i, j in index_pairs:
        pc = _compare_pair(names[i], names[j], unc[i], unc[j], np.concatenate([nulls[i], nulls[j]]),
                           opts.significance, opts.min_overlap, (spectra[i], spectra[j]),
                           (opts.min_decades, opts.min_weight))
        if diagnoses is not None:
            pc = dataclasses.replace(pc, rouse=rouse_ratios(diagnoses[i], diagnoses[j]))
        pairs.append(pc)
    ranking = tuple(sorted(range(len(pairs)), key=lambda k: (not math.isfinite(pairs[k].shape_distance),
                                                             pairs[k].shape_distance)))
    series = series_scaling(spectra, M, c, diagnoses=diagnoses, labels=names)
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
    return Comparison(samples=tuple(samples), reference=names[ref] if ref is not None else None, pairs=tuple(pairs),
                      ranking=ranking, series=series, options=opts, spectra=tuple(spectra))


def _as_spectrum(result: Spectrum | Sweep, invert_options: InvertOptions | None) -> Spectrum:
    if isinstance(result, Sweep):
        return invert(result, invert_options)
    if isinstance(result, Spectrum):
        return result
    raise SettingsError(f"compare takes Spectrum or Sweep objects, not {type(result).__name__}")


def _reference_index(reference: int | str | None, names: Sequence[str]) -> int | None:
    if reference is None:
        return None
    if isinstance(reference, str):
        if reference not in names:
            raise SettingsError(f"reference {reference!r} is not one of the samples {list(names)}")
        return list(names).index(reference)
    ref = int(reference)
    if not 0 <= ref < len(names):
        raise SettingsError(f"reference index {ref} out of range")
    return ref


def _series_variables(spectra: Sequence[Spectrum], metadata: Sequence[Mapping[str, float | None]] | None
                      ) -> tuple[list[Any], list[Any], list[Any]]:
    """M (g/mol), c and T (K) of every sample: given in ``metadata``, else from the sweep's metadata lines.

    ``metadata`` (the manifest's columns) gives M in g/mol and c as written.  Units written in the sweeps'
    metadata are converted (``10 kg/mol`` and ``10000 g/mol`` are one M), and a series whose samples mix a
    unit with none, a mass concentration with a mass fraction, or values of the manifest with values of the
    sweeps' metadata, is refused: only the exponents are fitted, so numbers without a unit serve when every
    sample gives them alike.
    """
    meta = [dict(m or {}) for m in metadata] if metadata is not None else [{} for _ in spectra]
    if len(meta) != len(spectra):
        raise SettingsError("metadata must have one mapping per sample")
    M, c, T = [], [], []
    how: dict[str, list[tuple[str, str, str]]] = {"M": [], "c": []}  # (kind, text, sample) of each value given
    for s, md in zip(spectra, meta):
        sw = s.as_sweep()
        src = sw.source or sw.name
        for key, meta_key, convert, out in (("M", "molecular_weight", _molar_mass, M),
                                            ("c", "concentration", _concentration, c)):
            if md.get(key) is not None:  # M in g/mol; c as given (the manifest's columns)
                out.append(md[key])
                how[key].append(("given in the manifest", f"{md[key]:g}", src))
            elif sw.meta.get(meta_key) is not None:
                try:
                    value, kind = convert(sw.meta[meta_key])
                except ValueError as exc:
                    raise SettingsError(str(exc), src) from None
                out.append(value)
                how[key].append((kind, sw.meta[meta_key], src))
            else:
                out.append(None)
        T.append(md.get("T") if md.get("T") is not None else sw.meta_number("temperature", kind="temperature"))
    for key, what in (("M", "molecular weight"), ("c", "concentration")):
        other = next((h for h in how[key] if h[0] != how[key][0][0]), None)
        if other is not None:
            (k1, t1, n1), (k2, t2, n2) = how[key][0], other
            raise SettingsError(f"the {what} of {n1} is {t1!r} ({k1}) but of {n2} {t2!r} ({k2}): a series needs "
                                f"them in one kind to be compared; write every sample's {what} alike (or give "
                                f"{key} of every file in --manifest)")
    return M, c, T


def _molar_mass(text: str) -> tuple[float, str]:
    value, given = molar_mass(text)
    return value, "with a unit" if given else "without a unit"


def _concentration(text: str) -> tuple[float, str]:
    value, kind = concentration(text)
    return value, kind or "without a unit"
