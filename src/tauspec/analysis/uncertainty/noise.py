"""The relative noise of G' and G'' of a sweep, from the residuals of its regularized fit or from the data's roughness.

:func:`roughness_noise` (issue 16) is model-free: it needs no fit, only the data's point-to-point scatter.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from ...data.record import record
from ...errors import SettingsError
from ...models.signatures import EDGE_TOLERANCE
from ...spectrum.problem import build_problem
from ...spectrum.result import Spectrum

__all__ = ["MAX_NOISE", "Noise", "estimate_noise", "pooled_noise"]


#: Largest relative noise the resampling accepts: beyond it 1 + σε can turn negative.
MAX_NOISE = 0.2


# --------------------------------------------------------------------------- results
@record
class Noise:
    """The relative noise of G' and G'' used for resampling.

    Attributes
    ----------
    storage, loss : float
        Relative standard deviations σ', σ'' of G' and G''.
    given : bool
        True when the user gave them, False when estimated from the residuals.
    dof : float
        Effective number of fitted parameters (trace of the influence matrix);
        NaN when the noise was given.
    how : str
        How the numbers were obtained, in words.
    """

    storage: float
    loss: float
    given: bool
    dof: float
    how: str


# --------------------------------------------------------------------------- noise
def _influence(spectrum: Spectrum) -> np.ndarray:
    """Influence matrix H_λ = A_F (A_FᵀA_F + λ² L_FᵀL_F)⁻¹ A_Fᵀ of the fit, on its free set F."""
    prob = build_problem(spectrum.as_sweep(), spectrum.tau, spectrum.options)
    values = [spectrum.H]
    if prob.solvent:
        values.append([spectrum.eta_s])
    if prob.equilibrium_modulus:
        values.append([spectrum.G_e])
    x = np.concatenate(values) / prob.scale
    F = x > 1e-10 * max(float(np.max(x)), 1e-300)
    A, L = prob.A[:, F], prob.L[:, F]
    M = A.T @ A + spectrum.strength**2 * (L.T @ L)
    try:
        Z = np.linalg.solve(M, A.T)
    except np.linalg.LinAlgError:
        Z = np.linalg.lstsq(M, A.T, rcond=None)[0]
    return A @ Z


def estimate_noise(spectrum: Spectrum) -> Noise:
    """Estimate the relative noise σ', σ'' of G' and G'' from the fit residuals.

    With relative residuals r = G_fit/G − 1 ≈ −R ε, R = I − H_λ (H_λ the
    influence matrix of the regularized fit on its free set), the expected
    squared residuals of the G' rows and of the G'' rows are

        E‖r'‖²  = σ'² Σ_{i∈',j∈'} R_ij² + σ''² Σ_{i∈',j∈''} R_ij²
        E‖r''‖² = σ'² Σ_{i∈'',j∈'} R_ij² + σ''² Σ_{i∈'',j∈''} R_ij²

    solved for σ'², σ''².  When the solution is not positive (the cross
    terms are large), each block is corrected by its own share of the
    trace instead: σ_B² = ‖r_B‖² / (m_B − tr_B H_λ).

    References
    ----------
    Hastie, T. & Tibshirani, R. (1990). *Generalized Additive Models*, §3.4
    (residual variance of a linear smoother); Wahba (1983), J. R. Stat. Soc.
    B 45:133.
    """
    n = len(spectrum.omega)
    Hm = _influence(spectrum)
    R = np.eye(2 * n) - Hm
    W = R * R
    C = np.array([[W[:n, :n].sum(), W[:n, n:].sum()], [W[n:, :n].sum(), W[n:, n:].sum()]])
    rp = spectrum.storage_fit / spectrum.storage - 1.0
    rpp = spectrum.loss_fit / spectrum.loss - 1.0
    ss = np.array([rp @ rp, rpp @ rpp])
    dof = float(np.trace(Hm))
    try:
        s2 = np.linalg.solve(C, ss)
    except np.linalg.LinAlgError:
        s2 = np.array([-1.0, -1.0])
    how = "estimated from the relative residuals, corrected by the influence matrix of the fit"
    if not np.all(s2 > 0):
        d = np.diag(Hm)
        free = np.array([n - d[:n].sum(), n - d[n:].sum()])
        if np.any(free <= 0.5):
            raise SettingsError("too few frequencies to estimate the noise from the residuals; give the noise",
                                spectrum.source or spectrum.sample)
        s2 = ss / free
        how = "estimated from the relative residuals, each modulus corrected by its share of the fitted parameters"
    return Noise(storage=float(np.sqrt(s2[0])), loss=float(np.sqrt(s2[1])), given=False, dof=dof,
                 how=f"{how} ({dof:.1f} effective parameters, {2 * n} data)")


def _given_noise(noise: float | Sequence[float]) -> Noise:
    vals = np.atleast_1d(np.asarray(noise, dtype=float)).ravel()
    if vals.size == 1:
        vals = np.repeat(vals, 2)
    if vals.size != 2 or not np.all(np.isfinite(vals)) or np.any(vals <= 0):
        raise SettingsError(f"noise must be a positive relative size (or one for G' and one for G''), not {noise!r}")
    return Noise(storage=float(vals[0]), loss=float(vals[1]), given=True, dof=math.nan, how="given")


def pooled_noise(spectrum: Spectrum) -> float:
    """One relative noise level for G' and G'' together: rms · √(m/(m − p)).

    p = tr H_λ is the effective number of parameters of the regularized fit, the trace of the influence matrix
    of :func:`estimate_noise` (Wahba 1990, *Spline Models for Observational Data*, SIAM, ch. 4: the residual of a
    linear smoother underestimates the noise by √(1 − p/m)).
    """
    try:
        p = float(np.trace(_influence(spectrum)))
    except (ValueError, np.linalg.LinAlgError):
        p = 0.0
    m = 2 * len(spectrum.omega)
    return float(spectrum.residual_rms) * math.sqrt(m / max(m - p, 1.0))


# --------------------------------------------------------------------------- model-free: the data's roughness
#: Noise floor: below the repeatability of any oscillatory measurement (common practice, no single source); keeps
#: exact synthetic data from demanding an exact fit.
NOISE_FLOOR = 0.002
#: Consistency constant of the median absolute deviation for a normal distribution (Hampel 1974).
MAD_SCALE = 1.4826
#: Asymptotic efficiency of the median absolute deviation at the normal distribution: a MAD of n values is
#: worth about 0.37 n Gaussian degrees of freedom (Rousseeuw & Croux 1993; from memory).
MAD_EFFICIENCY = 0.37


#: Fewest points per decade (median spacing) at which a curve's roughness measures its scatter.  Our choice,
#: measured on exact curves (a Maxwell mode, a log-normal spectrum of σ = 0.6, a Rouse chain of N = 30): their
#: roughness is 2–38 % at 1–2 points per decade, 0.3–0.7 % at 3 and below 0.2 % from 4 on.
MIN_POINTS_PER_DECADE = 3.0


def points_per_decade(omega: np.ndarray) -> float:
    """Points per decade of frequency at the sweep's median spacing (infinite for fewer than two points)."""
    steps = np.diff(np.log10(np.asarray(omega, dtype=float)))
    return 1.0 / float(np.median(steps)) if steps.size and np.median(steps) > 0 else math.inf


def density_words(density: float) -> str:
    """``"1 point per decade"``, ``"2.5 points per decade"``."""
    return f"{density:.3g} point{'' if density == 1 else 's'} per decade"


def too_sparse(density: float) -> bool:
    """``density`` (:func:`points_per_decade`) is below :data:`MIN_POINTS_PER_DECADE`, to the edge tolerance.

    A sweep set to three points per decade and exported to three significant digits has a median step of
    0.3335 decade (2.9987 points per decade): it is not sparser than it was set to be
    (:data:`~tauspec.models.signatures.EDGE_TOLERANCE`).
    """
    return 1.0 / density > 1.0 / MIN_POINTS_PER_DECADE + EDGE_TOLERANCE


def roughness_noise(omega: np.ndarray, values: np.ndarray) -> float:
    """Relative noise of one modulus from its point-to-point roughness, without any model.

    On y = ln G against x = ln ω, each interior point is predicted by the least-squares quadratic through its
    four neighbours (i ± 1, i ± 2), and the pseudo-residual e_i = (y_i − ŷ_i)/√(1 + Σ c_j²) (c the weights of
    the prediction) has the variance of the noise wherever the curve is locally quadratic (Gasser, Sroka &
    Jennen-Steinmetz 1986, Biometrika 73:625, use the straight line through two neighbours; the quadratic keeps
    the curvature of a crossover out of the estimate).  The scale is 1.4826 × median |e_i| (Hampel 1974, J. Am.
    Stat. Assoc. 69:383), robust against the few points where the curve bends sharply.  Relative noise ε on G
    is ε in ln G.  NaN with fewer than 5 points.
    """
    x = np.log(np.asarray(omega, dtype=float))
    y = np.log(np.asarray(values, dtype=float))
    if len(x) < 5:
        return math.nan
    i = np.arange(2, len(x) - 2)
    idx = i[:, None] + np.array([-2, -1, 1, 2])  # the four neighbours of every interior point
    dx = x[idx] - x[i, None]
    X = np.stack([np.ones_like(dx), dx, dx * dx], axis=2)  # 1, dx, dx²
    Xt = np.swapaxes(X, 1, 2)
    c = np.linalg.solve(Xt @ X, Xt)[:, 0, :]  # the value at x_i of each least-squares quadratic
    e = (y[i] - np.einsum("ij,ij->i", c, y[idx])) / np.sqrt(1.0 + np.einsum("ij,ij->i", c, c))
    return float(MAD_SCALE * np.median(np.abs(e)))
