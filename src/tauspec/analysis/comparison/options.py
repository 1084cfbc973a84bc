"""The options of a comparison between samples: one frozen record, validated once."""

from __future__ import annotations

from ...data.record import check_bool, check_number, option, record

__all__ = ["CompareOptions"]


@record
class CompareOptions:
    """How :func:`~tauspec.analysis.comparison.compare.compare` tests and scales.

    Attributes
    ----------
    replicates : int
        Replicate spectra per sample (parametric resampling) for the null distribution of the shape distance and
        the intervals of the shifts; 0 skips the shape test (``same_shape`` is then None).
    significance : float
        Size of the shape test: ``same_shape`` is false when its p-value is below it.
    seed : int
        Seed of the resampling (combined with each sample's data, so the order of samples does not matter).
    min_overlap : float
        Smallest overlap of the two supported windows after the shift, as a fraction of the narrower window.
    min_decades, min_weight : float
        The overlap rule (issue 16): after the shift the samples' frequency ranges must overlap by this many
        decades of G' and G'', with this share of each spectrum's weight inside; otherwise ``same_shape`` is None
        ("cannot tell").
    reselect : bool
        Re-choose λ on every replicate by the sample's own rule, dropping replicates whose λ lies a decade from
        their median (the default); False keeps each sample's own λ (faster; docs/compare.md).
    """

    replicates: int = option(12, metavar="N",
                             help="replicate spectra per sample for the shape test and the intervals (12; 0: none)")
    significance: float = option(0.05, metavar="P", help="size of the shape test (0.05)")
    seed: int = option(0, metavar="N", help="seed of the resampling (0)")
    min_overlap: float = option(0.5, cli=False, help="smallest overlap of the windows after the shift")
    min_decades: float = option(1.5, cli=False,
                                help="smallest overlap of G' and G'' after the shift, decades (our choice)")
    min_weight: float = option(0.5, cli=False,
                               help="smallest share of each spectrum's weight inside that overlap (our choice)")
    reselect: bool = option(True, negate="--fixed-strength",
                            help="re-choose λ on every replicate (--fixed-strength: keep each sample's own; faster)",
                            negate_help="keep each sample's own λ on its replicates (faster; default: λ re-chosen "
                                        "on every replicate)")

    def __post_init__(self) -> None:
        check_number("replicates", self.replicates, lo=0, integer=True, what="a whole number")
        check_number("significance", self.significance, lo=0, hi=1, lo_open=True, hi_open=True, what="a test size")
        check_number("seed", self.seed, lo=0, integer=True, what="a whole number")
        check_number("min_overlap", self.min_overlap, lo=0, hi=1, lo_open=True, what="a fraction")
        check_number("min_decades", self.min_decades, lo=0, what="a number of decades")
        check_number("min_weight", self.min_weight, lo=0, hi=1, what="a fraction")
        check_bool("reselect", self.reselect)
