"""The continuous relaxation spectrum H(τ) from a frequency sweep.

:func:`invert` minimizes the sum of squared *relative* residuals of G' and G''
plus λ² ∫ (d²H/d(ln τ)²)² d ln τ over H ≥ 0 on a logarithmic τ grid, with the
solvent viscosity η_s ≥ 0 (on by default) and the equilibrium modulus
G_e ≥ 0 (off by default) as extra unknowns, and chooses λ along a path of
strengths by the L-curve corner or by GCV.

References
----------
Honerkamp, J. & Weese, J. (1989). Determination of the relaxation spectrum by
a regularization method. Macromolecules 22:4372–4377.
Davies, A. R. & Anderssen, R. S. (1997). Sampling localization in determining
the relaxation spectrum. J. Non-Newtonian Fluid Mech. 73:163–179.
Hansen, P. C. (1992). SIAM Rev. 34:561–580 (the L-curve).
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from collections.abc import Mapping
from typing import Any

import numpy as np

from ..data.record import resolve_options
from ..data.sweep import Sweep
from ..errors import DroppedPointsWarning, SettingsError, WeakResultWarning
from .options import InvertOptions
from .problem import Problem, build_problem, known_solvent_caution, strength_path
from .regularize import PathSolution, TikhonovPath, objective, solve_cvxpy
from .result import LCurve, Spectrum
from .rules import RULES
from .threads import blas_limit
from .window import default_grid, supported_window

__all__ = ["invert", "runs_test"]


#: Most extensions of the path at each end, each by a quarter of its initial length.
_MAX_EXTENSIONS = 8


def _solve_path(path: TikhonovPath, strengths: np.ndarray) -> PathSolution:
    """Solve along ``strengths`` (descending), extending the path until both ends are reached.

    The small-λ end must reach the floor of the residual — the residual of
    the unregularized nonnegative fit — to within 0.5 %, and the large-λ end must
    lie well above it (three times), so that the L-curve has both of its arms
    and the corner lies inside the path.  Each extension adds a quarter of the
    initial number of strengths at the same spacing.
    """
    floor = path.floor()
    step = float(np.log(strengths[0] / strengths[1]))
    block = max(len(strengths) // 4, 2)
    sol = path.path(strengths)
    for _ in range(_MAX_EXTENSIONS):
        # (a residual below 1e-7 per point is exact data: nothing more to reach)
        low_ok = sol.residual_norm[-1] <= max(1.005 * floor, 1e-7 * math.sqrt(len(path.b)))
        high_ok = sol.residual_norm[0] >= 3.0 * floor or sol.solution_norm[0] <= 1e-6 * sol.solution_norm.max()
        if low_ok and high_ok:
            break
        if not low_ok:
            more = sol.strength[-1] * np.exp(-step * np.arange(1, block + 1))
            sol = TikhonovPath.join(sol, path.path(more, passive=sol.x[-1] > 0))
        if not high_ok:
            more = sol.strength[0] * np.exp(step * np.arange(1, block + 1))
            ext = path.path(more, passive=sol.x[0] > 0)
            sol = TikhonovPath.join(*(_reverse(ext), sol))
    return sol


def _reverse(sol: PathSolution) -> PathSolution:
    return PathSolution(*(getattr(sol, f.name)[::-1] for f in dataclasses.fields(PathSolution)))


def invert(sweep: Sweep, options: InvertOptions | None = None, **changes: Any) -> Spectrum:
    """Recover the continuous relaxation spectrum H(τ) of a sweep.

    Minimizes Σ (G'_fit/G' − 1)² + Σ (G''_fit/G'' − 1)² + λ² ‖L h‖² over
    H ≥ 0, η_s ≥ 0 (``solvent``) and G_e ≥ 0 (``equilibrium_modulus``), where L is
    the second difference in ln τ (Honerkamp & Weese 1989).

    Parameters
    ----------
    sweep : Sweep
    options : InvertOptions, optional
        How to invert (strength and its rule, grid, solvent, equilibrium modulus, bounds, solver).
    **changes
        Fields of :class:`~tauspec.spectrum.options.InvertOptions` given directly, e.g.
        ``invert(sweep, select="gcv", equilibrium_modulus=True)``; they replace those of ``options``.

    Returns
    -------
    Spectrum
        With the resolved options (the grid size used, the solver that ran).

    References
    ----------
    Honerkamp & Weese (1989), Macromolecules 22:4372; Hansen (1992), SIAM Rev.
    34:561; Davies & Anderssen (1997), J. Non-Newtonian Fluid Mech. 73:163.
    """
    opts = resolve_options(InvertOptions, options, changes, "invert()")
    sweep, dropped = sweep.restrict(opts.omega_min, opts.omega_max)
    if dropped:
        warnings.warn(f"{sweep.source or sweep.name}: {dropped}", DroppedPointsWarning, stacklevel=2)
    if opts.grid is None or isinstance(opts.grid, int):
        tau = default_grid(sweep.omega, opts.grid)
    else:
        tau = np.asarray(opts.grid, dtype=float)
    solvent_note = known_solvent_caution(sweep.omega, sweep.loss, opts.eta_s, sweep.source or sweep.name)
    problem = build_problem(sweep, tau, opts)
    with blas_limit(problem.A.shape[1]):  # one BLAS thread for a problem this small (spectrum.threads)
        strengths, X, res, sol, dof = _path(problem, opts)
    m = len(problem.b)
    choices = {name: rule(strengths, res, sol, dof, m) for name, rule in RULES.items()}
    notes: list[str] = [solvent_note] if solvent_note else []
    if opts.strength == "auto":
        choice = choices[opts.select]
        idx, chosen_by, note = choice.index, opts.select, choice.note
        strength, x = float(strengths[idx]), X[idx]
        if idx in (0, len(strengths) - 1):
            notes.append("the chosen strength lies at the end of the path; the choice is uncertain")
        if "no clear corner" in note:
            notes.append(note)
    else:
        strength = float(opts.strength)
        with blas_limit(problem.A.shape[1]):
            x = _solve_at(problem, opts, strength)
        idx = int(np.argmin(np.abs(np.log(strengths / strength))))
        chosen_by, note = "fixed", "strength fixed by the user"
    H, eta_fit, G_e = _unpack(problem, opts, x)
    # the fitted moduli from the weighted problem itself (rows are data-weighted: undo the weights)
    n = len(sweep)
    fitted = (problem.A @ x) * np.concatenate([sweep.storage, sweep.loss])
    storage_fit, loss_fit = fitted[:n], fitted[n:] + problem.loss_offset
    rel = np.concatenate([storage_fit / sweep.storage - 1.0, loss_fit / sweep.loss - 1.0])
    rms = float(np.sqrt(np.mean(rel * rel)))
    window = supported_window(sweep.omega)
    notes += _cautions(sweep, opts, window, rel, rms)
    if not (np.all(np.isfinite(H)) and math.isfinite(eta_fit) and math.isfinite(G_e)):  # never report NaN
        raise SettingsError("the inversion produced non-finite values", sweep.source or sweep.name)
    for text in notes:
        warnings.warn(f"{sweep.source or sweep.name}: {text}", WeakResultWarning, stacklevel=2)
    lcurve = LCurve(strength=strengths, residual_norm=res, solution_norm=sol, curvature=choices["lcurve"].score,
                    gcv=choices["gcv"].score, index=idx, note=note)
    resolved = dataclasses.replace(opts, grid=int(len(tau)), solver="cvxpy" if opts.uses_cvxpy else "fast")
    return Spectrum(
        sample=sweep.name, source=sweep.source, tau=tau, H=H, strength=strength, chosen_by=chosen_by, window=window,
        eta_s=eta_fit, G_e=G_e, residual_rms=rms, omega=sweep.omega, storage=sweep.storage, loss=sweep.loss,
        storage_fit=storage_fit, loss_fit=loss_fit, lcurve=lcurve,
        warnings=tuple(([dropped] if dropped else []) + notes), options=resolved,
        objective=objective(problem.A, problem.b, problem.L, x, strength), meta=dict(sweep.meta),
    )


def _path(problem: Problem, opts: InvertOptions) -> tuple[np.ndarray, ...]:
    """The strength path and its solutions: (λ, x, residual norms, solution norms, degrees of freedom).

    The path's extent comes from the fast exact solver; with bounds the general solver then follows the same
    strengths.
    """
    path = TikhonovPath(problem.A, problem.b, problem.L)
    sol_path = _solve_path(path, strength_path(problem, opts.n_strengths))
    strengths = sol_path.strength
    X, res, sol, dof = sol_path.x, sol_path.residual_norm, sol_path.solution_norm, sol_path.dof
    if opts.uses_cvxpy:
        lower, upper = _bounds_vector(problem, opts.bounds or {})
        X = solve_cvxpy(problem.A, problem.b, problem.L, strengths, lower=lower, upper=upper)
        res = np.linalg.norm(X @ problem.A.T - problem.b, axis=1)
        sol = np.linalg.norm(X @ problem.L.T, axis=1)
        dof = np.array([path.dof(s, x > 1e-9 * max(float(x.max()), 1e-300)) for s, x in zip(strengths, X)])
    return strengths, X, res, sol, dof


def _solve_at(problem: Problem, opts: InvertOptions, strength: float) -> np.ndarray:
    """The solution at one strength given by the user."""
    if opts.uses_cvxpy:
        lower, upper = _bounds_vector(problem, opts.bounds or {})
        return solve_cvxpy(problem.A, problem.b, problem.L, [strength], lower=lower, upper=upper)[0]
    return TikhonovPath(problem.A, problem.b, problem.L).solve(strength)[0]


def _unpack(problem: Problem, opts: InvertOptions, x: np.ndarray) -> tuple[np.ndarray, float, float]:
    """H (Pa), η_s (Pa·s) and G_e (Pa) from the dimensionless unknowns."""
    values = x * problem.scale
    k = problem.n_grid
    eta_fit = 0.0
    if problem.solvent:
        eta_fit = float(values[k])
        k += 1
    elif opts.eta_s is not None:
        eta_fit = float(opts.eta_s)
    G_e = float(values[k]) if problem.equilibrium_modulus else 0.0
    return values[: problem.n_grid], eta_fit, G_e


def _cautions(sweep: Sweep, opts: InvertOptions, window: tuple[float, float], rel: np.ndarray,
              rms: float) -> list[str]:
    """Cautions in words: an empty window, systematic or large residuals."""
    notes = []
    if not window[0] < window[1]:
        notes.append(
            f"the frequency range ({sweep.omega[0]:.3g}–{sweep.omega[-1]:.3g} rad/s) is narrower than e^π ≈ 23: "
            "the data determine the spectrum nowhere (Davies & Anderssen 1997)"
        )
    n = len(sweep)
    runs_p = min(runs_test(rel[:n]), runs_test(rel[n:])) if n >= 10 else 1.0
    if runs_p < 1e-3 and rms > 0.02:
        hint = ""
        if not opts.equilibrium_modulus and sweep.storage[0] > sweep.loss[0]:
            hint = ("; G' exceeds G'' at the lowest frequency — for a gel or solid try equilibrium_modulus=True "
                    "(--equilibrium-modulus)")
        notes.append(f"the residuals are systematic (runs test p = {runs_p:.1g}, rms {100 * rms:.1f} %): the "
                     f"spectrum does not describe the data well{hint}")
    elif rms > 0.1:
        notes.append(f"the residuals are large (rms {100 * rms:.0f} %) but without systematic trend: noisy data; the "
                     "spectrum is only roughly determined")
    return notes


def runs_test(residuals: np.ndarray) -> float:
    """Two-sided p-value of the Wald–Wolfowitz runs test on the signs of residuals ordered by ω.

    Systematic misfit leaves long runs of one sign.  With n₊ positive and n₋
    negative signs, the number of runs R has mean μ = 1 + 2n₊n₋/n and variance
    σ² = (μ − 1)(μ − 2)/(n − 1); the normal approximation gives the p-value of
    too few runs (one-sided, the alternative that matters for misfit).

    References
    ----------
    Wald, A. & Wolfowitz, J. (1940). On a test whether two samples are from the
    same population. Ann. Math. Stat. 11:147–162.
    """
    signs = np.sign(residuals)
    signs = signs[signs != 0]
    n = len(signs)
    n_pos = int(np.sum(signs > 0))
    n_neg = n - n_pos
    if n_pos == 0 or n_neg == 0:
        return 0.0 if n >= 10 else 1.0
    runs = 1 + int(np.sum(signs[1:] != signs[:-1]))
    mu = 1 + 2 * n_pos * n_neg / n
    var = (mu - 1) * (mu - 2) / (n - 1)
    if var <= 0:
        return 1.0
    z = (runs - mu) / math.sqrt(var)
    return float(0.5 * math.erfc(-z / math.sqrt(2)))


def _bounds_vector(problem: Problem, bounds: Mapping[str, tuple[float, float]]) -> tuple[np.ndarray, np.ndarray]:
    n = problem.A.shape[1]
    lower = np.zeros(n)
    upper = np.full(n, np.inf)
    n_h = problem.n_grid
    if "H" in bounds:
        lo, hi = bounds["H"]
        lower[:n_h] = max(lo, 0.0) / problem.scale[:n_h]
        upper[:n_h] = hi / problem.scale[:n_h]
    k = n_h
    if problem.solvent:
        if "eta_s" in bounds:
            lo, hi = bounds["eta_s"]
            lower[k], upper[k] = max(lo, 0.0) / problem.scale[k], hi / problem.scale[k]
        k += 1
    if problem.equilibrium_modulus and "G_e" in bounds:
        lo, hi = bounds["G_e"]
        lower[k], upper[k] = max(lo, 0.0) / problem.scale[k], hi / problem.scale[k]
    return lower, upper
