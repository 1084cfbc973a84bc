"""Are the data describable at all?  The checks made before any model verdict ("cannot tell" is an answer).

Pure functions over numpy arrays; the decision is made in :mod:`tauspec.analysis.diagnosis.verdict`.

* :func:`~tauspec.analysis.uncertainty.noise.roughness_noise` — the relative noise of a modulus from its own
  point-to-point roughness (pseudo-residuals, Gasser, Sroka & Jennen-Steinmetz 1986), with no model.
* :func:`kramers_kronig_check` — G' and G'' against each other through the local power-law form of the
  Kramers–Kronig relations (Booij & Thoone 1982).
* :func:`phase_resolved` — whether the phase angle lies inside what an oscillatory rheometer resolves.

References
----------
Gasser, T., Sroka, L. & Jennen-Steinmetz, C. (1986). Residual variance and residual pattern in nonlinear
regression. Biometrika 73, 625–633.
Hampel, F. R. (1974). The influence curve and its role in robust estimation. J. Am. Stat. Assoc. 69, 383–393
(the median absolute deviation scaled by 1.4826).
Booij, H. C. & Thoone, G. P. J. M. (1982). Generalization of Kramers–Kronig transforms and some
approximations of relations between viscoelastic quantities. Rheol. Acta 21, 15–24.
Ferry, J. D. (1980). *Viscoelastic Properties of Polymers*, 3rd ed., ch. 4 (Kramers–Kronig relations).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from ...models.signatures import local_slopes
from ..uncertainty.noise import (
    MIN_POINTS_PER_DECADE,
    NOISE_FLOOR,
    density_words,
    points_per_decade,
    roughness_noise,
    too_sparse,
)
from .evidence import Evidence

__all__ = ["KKCheck", "kramers_kronig_check", "phase_resolved", "describability_evidence", "NOISE_FLOOR",
           "NOISE_MAX", "FIT_RATIO_MAX", "PHASE_LIMIT", "KK_APPROXIMATION"]

@dataclasses.dataclass(frozen=True, kw_only=True)
class KKCheck:
    """G' and G'' against each other by the local power-law form of the Kramers–Kronig relations.

    ``misfit`` is the median of |ln(G_measured/G_predicted)| over the ``n_points`` points where the form
    applies; ``allowed`` is what the approximation and the noise together allow there.
    """

    misfit: float
    allowed: float
    n_points: int

    @property
    def passed(self) -> bool | None:
        """True when the moduli agree within ``allowed``; None when the form applies at too few points."""
        if self.n_points < KK_MIN_POINTS or not math.isfinite(self.misfit):
            return None
        return self.misfit <= self.allowed


#: Error of the local power-law form itself on smooth spectra (median |ln ratio|): measured up to 0.40 on
#: Rouse, Zimm, BSW, log-normal and a broad LDPE spectrum at 1 % noise.  Our bound (docs/diagnosis.md).
KK_APPROXIMATION = 0.45


#: Fewest points where the local form applies for the check to be made (a median of fewer is noise; our choice).
KK_MIN_POINTS = 8
#: Largest change of the local slope across one decade where the local power-law form is used (our choice).
SLOPE_DRIFT = 0.15


def kramers_kronig_check(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, noise: float,
                         half_width: float = 0.25) -> KKCheck:
    """Predict each modulus from the other's local slope and compare (Booij & Thoone 1982).

    For a local power law G ∝ ω^n with 0 < n < 1 the Kramers–Kronig relations give exactly
    G''/G' = tan(nπ/2), so

        G''(ω) ≈ G'(ω) tan((π/2) d ln G'/d ln ω),        G'(ω) ≈ G''(ω) tan((π/2)(1 − d ln G''/d ln ω)),

    the local approximations of Booij & Thoone (1982) (forms from memory; exact for power laws, checked
    numerically in the tests).  Each is used where its slope lies in [0.05, 0.95] and stays steady across a
    decade (outside, e.g. in the terminal zone where G' ∝ ω², the form does not hold).  The second is also
    left out where G' itself is level (slope below 0.05): the relations fix G' only up to an additive constant,
    G' − G_e (Ferry 1980, ch. 4), and a level G' above what G'' implies is such a constant (an equilibrium
    modulus, or a plateau of relaxations slower than the window), not a violation.  Slopes are straight-line
    fits over ±``half_width`` decades.  ``allowed`` = :data:`KK_APPROXIMATION` + 3 × the noise of one ratio
    (two moduli and a slope).
    """
    w = np.asarray(omega, dtype=float)
    gp = np.asarray(storage, dtype=float)
    gpp = np.asarray(loss, dtype=float)
    lw = np.log10(w)
    r = []
    n_p = local_slopes(w, gp, half_width)
    level = n_p < 0.05
    for y, other, flip, n in ((gp, gpp, False, n_p), (gpp, gp, True, local_slopes(w, gpp, half_width))):
        # the slope half a decade either side: the form is a local power law, so it is used only where the
        # slope stays within SLOPE_DRIFT over that decade
        n_lo = np.interp(lw - 2 * half_width, lw, n, left=np.nan)
        n_hi = np.interp(lw + 2 * half_width, lw, n, right=np.nan)
        ok = (n >= 0.05) & (n <= 0.95) & (np.abs(n_hi - n_lo) <= SLOPE_DRIFT)
        if flip:
            ok &= ~level
        ratio = np.tan(0.5 * math.pi * ((1.0 - n[ok]) if flip else n[ok]))
        r.extend(np.log(other[ok] / (y[ok] * ratio)))
    misfit = float(np.median(np.abs(r))) if r else math.nan
    allowed = KK_APPROXIMATION + 3.0 * math.sqrt(3.0) * (noise if math.isfinite(noise) else 0.0)
    return KKCheck(misfit=misfit, allowed=allowed, n_points=len(r))


#: tan δ outside [PHASE_LIMIT, 1/PHASE_LIMIT] at every frequency: one modulus is below 10⁻⁴ of the other,
#: a phase angle within 0.1 mrad of 0 or π/2, below what rotational rheometers resolve (common practice,
#: no single source).
PHASE_LIMIT = 1e-4


def phase_resolved(storage: np.ndarray, loss: np.ndarray) -> tuple[bool, float]:
    """(resolved, median tan δ): False when tan δ < 10⁻⁴ or > 10⁴ at every frequency."""
    tan_d = np.asarray(loss, dtype=float) / np.asarray(storage, dtype=float)
    small = np.all(tan_d < PHASE_LIMIT)
    large = np.all(tan_d > 1.0 / PHASE_LIMIT)
    return not (small or large), float(np.median(tan_d))


#: Point-to-point scatter (relative, in ln G) above which the moduli carry no shape: over a decade of ~8
#: points the local level is then known no better than ±10 % (common practice, no single source).
NOISE_MAX = 0.3
#: Largest ratio of the spectrum fit's rms residual to the data's own scatter.  Measured on valid synthetic
#: sweeps (Rouse, Zimm, BSW, log-normal, gels, Maxwell, LDPE; 0–3 % noise): at most 1.2; random moduli of
#: narrow spread 2.4.  2 is our choice.
FIT_RATIO_MAX = 2.0


def describability_evidence(omega: np.ndarray, storage: np.ndarray, loss: np.ndarray, fit_rms: float,
                            fit_what: str, free_rms: float = math.nan) -> tuple[list, float]:
    """The tests run before any verdict, as Evidence, and the data's relative noise (pooled, floored).

    ``fit_rms`` is the rms relative residual of the smooth nonnegative spectrum (``fit_what`` names it);
    ``free_rms`` that of the unregularized nonnegative spectrum (Jakeš 1995), used when the smooth one fails
    (then the strength choice, not the data, was at fault, and a note says so).
    """
    density = points_per_decade(omega)
    if too_sparse(density):  # the curve's own bends would be taken for scatter: not measured
        noise = math.nan
        scatter_note = (f"not made: {density_words(density)}, fewer than {MIN_POINTS_PER_DECADE:g}, so the "
                        "curve's own bends would be taken for scatter; the scatter is taken as the floor "
                        f"{NOISE_FLOOR:g}")
    else:
        s1, s2 = roughness_noise(omega, storage), roughness_noise(omega, loss)
        noise = math.sqrt(0.5 * (s1 * s1 + s2 * s2)) if math.isfinite(s1) and math.isfinite(s2) else math.nan
        scatter_note = (f"G' {s1:.3g}, G'' {s2:.3g}: pseudo-residuals of a local quadratic through the four "
                        "neighbours (Gasser, Sroka & Jennen-Steinmetz 1986), 1.4826 x median (Hampel 1974)")
    eff = max(noise, NOISE_FLOOR) if math.isfinite(noise) else NOISE_FLOOR
    ok_phase, tan_med = phase_resolved(storage, loss)
    ev = [Evidence(test="phase_resolved", value=tan_med,
                   expected=f"tan delta inside [{PHASE_LIMIT:g}, {1 / PHASE_LIMIT:g}] somewhere in the window",
                   passed=ok_phase, note="median tan delta; a phase angle within 0.1 mrad of 0 or pi/2 at every "
                                         "frequency is below what oscillatory rheometers resolve")]
    ev.append(Evidence(test="noise_level", value=noise, expected=f"<= {NOISE_MAX:g} (relative point-to-point scatter)",
                       passed=(noise <= NOISE_MAX) if math.isfinite(noise) else None, note=scatter_note))
    ratio = fit_rms / eff if math.isfinite(fit_rms) else math.nan
    passed = (ratio <= FIT_RATIO_MAX) if math.isfinite(ratio) else None
    note = f"rms residual of the {fit_what} / the data's scatter (floor {NOISE_FLOOR:g})"
    if passed is False and math.isfinite(free_rms) and free_rms / eff <= FIT_RATIO_MAX:
        passed = True
        note += (f"; the unregularized nonnegative spectrum fits within it ({free_rms / eff:.2f}), so the data are "
                 "describable and the strength chosen for the smooth spectrum was too large")
    ev.append(Evidence(test="spectrum_describes", value=ratio, expected=f"<= {FIT_RATIO_MAX:g}", passed=passed,
                       note=note))
    kk = kramers_kronig_check(omega, storage, loss, eff)
    ev.append(Evidence(test="kramers_kronig", value=kk.misfit if math.isfinite(kk.misfit) else None,
                       expected=f"<= {kk.allowed:.3g} (approximation {KK_APPROXIMATION:g} + 3 x noise)",
                       passed=kk.passed,
                       note=f"median |ln(measured/predicted)| of each modulus from the other's local slope at "
                            f"{kk.n_points} points (Booij & Thoone 1982)" if kk.n_points >= KK_MIN_POINTS else
                       f"the local power-law form applies at {kk.n_points} points, fewer than {KK_MIN_POINTS} "
                       "(slopes outside 0.05-0.95 or drifting, or G' level)"))
    return ev, eff
