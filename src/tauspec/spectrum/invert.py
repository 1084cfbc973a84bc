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
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from ..data.sweep import Sweep
from ..errors import SettingsError, WeakResultWarning
from .problem import N_STRENGTHS, Problem, build_problem, strength_path
from .regularize import PathSolution, TikhonovPath, objective, solve_cvxpy
from .result import LCurve, Spectrum
from .rules import RULES
from .window import default_grid, supported_window

__all__ = ["invert", "runs_test"]


#: Most extensions of the path at each end, each by a quarter of its initial length.
_MAX_EXTENSIONS = 8


def _solve_path(path: TikhonovPath, lams: np.ndarray) -> PathSolution:
    """Solve along ``lams`` (descending), extending the path until both ends are reached.

    The small-λ end must reach the floor of the residual — the residual of
    the unregularized nonnegative fit — to within 0.5 %, and the large-λ end must
    lie well above it (three times), so that the L-curve has both of its arms
    and the corner lies inside the path.  Each extension adds a quarter of the
    initial number of strengths at the same spacing.
    """
    floor = path.floor()
    step = float(np.log(lams[0] / lams[1]))
    block = max(len(lams) // 4, 2)
    sol = path.path(lams)
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


def _check_settings(select: str, strength: str | float, n_strengths: int, grid: Any) -> None:
    if select not in RULES:
        raise SettingsError(f"select must be one of {sorted(RULES)}, not {select!r}")
    if not (isinstance(strength, str) and strength == "auto"):
        try:
            value = float(strength)
        except (TypeError, ValueError):
            raise SettingsError(f"strength must be 'auto' or a positive number, not {strength!r}") from None
        if not (value > 0 and math.isfinite(value)):
            raise SettingsError(f"strength must be a positive number, not {strength!r}")
    if n_strengths < 8:
        raise SettingsError(f"n_strengths must be at least 8, not {n_strengths}")
    if isinstance(grid, int | np.integer) and not 10 <= int(grid) <= 2000:
        raise SettingsError(f"grid must have between 10 and 2000 points, not {grid}")


def invert(
    sweep: Sweep,
    *,
    strength: str | float = "auto",
    select: str = "lcurve",
    grid: int | Sequence[float] | np.ndarray | None = None,
    solvent: bool = True,
    plateau: bool = False,
    eta_s: float | None = None,
    bounds: Mapping[str, tuple[float, float]] | None = None,
    solver: str = "auto",
    n_strengths: int = N_STRENGTHS,
) -> Spectrum:
    """Recover the continuous relaxation spectrum H(τ) of a sweep.

    Minimizes Σ (G'_fit/G' − 1)² + Σ (G''_fit/G'' − 1)² + λ² ‖L h‖² over
    H ≥ 0, η_s ≥ 0 (``solvent``) and G_e ≥ 0 (``plateau``), where L is the
    second difference in ln τ (Honerkamp & Weese 1989).

    Parameters
    ----------
    sweep : Sweep
    strength : "auto" or float
        ``"auto"`` chooses λ by ``select``; a number fixes it (dimensionless,
        as reported in ``Spectrum.strength``).
    select : {"lcurve", "gcv"}
        The rule for ``strength="auto"``: the L-curve corner (maximum
        curvature, guarded) or the GCV minimum.
    grid : int or array_like, optional
        Number of τ points of the default grid, or the τ grid itself (s,
        uniform in ln τ).  Default: 12 per decade over [1/ω_max, 1/ω_min]
        widened by a decade at each end.
    solvent : bool
        Fit a solvent viscosity η_s ≥ 0 (G'' += η_s ω).
    plateau : bool
        Fit an equilibrium modulus G_e ≥ 0 (G' += G_e), for gels and solids.
    eta_s : float, optional
        A known solvent viscosity (Pa·s), subtracted from G'' instead of fitted.
    bounds : mapping, optional
        Extra bounds ``{"eta_s": (lo, hi), "G_e": (lo, hi), "H": (lo, hi)}`` in SI;
        they need the general convex solver (cvxpy).
    solver : {"auto", "fast", "cvxpy"}
        ``"auto"`` uses the fast exact path unless ``bounds`` are given.
    n_strengths : int
        Number of strengths on the path.

    Returns
    -------
    Spectrum

    References
    ----------
    Honerkamp & Weese (1989), Macromolecules 22:4372; Hansen (1992), SIAM Rev.
    34:561; Davies & Anderssen (1997), J. Non-Newtonian Fluid Mech. 73:163.
    """
    _check_settings(select, strength, n_strengths, grid)
    if solver not in ("auto", "fast", "cvxpy"):
        raise SettingsError(f"solver must be 'auto', 'fast' or 'cvxpy', not {solver!r}")
    if eta_s is not None and not (eta_s >= 0 and math.isfinite(eta_s)):
        raise SettingsError(f"eta_s must be a nonnegative number, not {eta_s!r}")
    bounds = dict(bounds or {})
    unknown = set(bounds) - {"eta_s", "G_e", "H"}
    if unknown:
        raise SettingsError(f"bounds may name eta_s, G_e and H, not {sorted(unknown)}")
    if solver == "fast" and bounds:
        raise SettingsError("bounds need solver='cvxpy' (or 'auto')")
    use_cvxpy = solver == "cvxpy" or (solver == "auto" and bool(bounds))

    if grid is None or isinstance(grid, int | np.integer):
        tau = default_grid(sweep.omega, None if grid is None else int(grid))
    else:
        tau = np.asarray(grid, dtype=float)
        lt = np.diff(np.log(tau)) if tau.size > 1 else np.array([])
        if tau.ndim != 1 or tau.size < 10 or np.any(tau <= 0) or not np.allclose(lt, lt[0], rtol=1e-6):
            raise SettingsError("grid must be at least 10 increasing times, uniformly spaced in ln τ")
    problem = build_problem(sweep, tau, solvent=solvent, plateau=plateau, eta_s=eta_s)
    lams = strength_path(problem, n_strengths)
    path = TikhonovPath(problem.A, problem.b, problem.L)

    # The path's extent comes from the fast exact solver; the general solver then follows the same strengths.
    sol_path = _solve_path(path, lams)
    lams = sol_path.strength
    X, res, sol, dof = sol_path.x, sol_path.residual_norm, sol_path.solution_norm, sol_path.dof
    if use_cvxpy:
        lower, upper = _bounds_vector(problem, bounds)
        X = solve_cvxpy(problem.A, problem.b, problem.L, lams, lower=lower, upper=upper)
        res = np.linalg.norm(X @ problem.A.T - problem.b, axis=1)
        sol = np.linalg.norm(X @ problem.L.T, axis=1)
        dof = np.array([path.dof(lam, x > 1e-9 * max(float(x.max()), 1e-300)) for lam, x in zip(lams, X)])

    m = len(problem.b)
    lc_choice = RULES["lcurve"](lams, res, sol, dof, m)
    gcv_choice = RULES["gcv"](lams, res, sol, dof, m)
    notes: list[str] = []
    if strength == "auto":
        choice = lc_choice if select == "lcurve" else gcv_choice
        idx = choice.index
        lam = float(lams[idx])
        x = X[idx]
        rule = select
        note = choice.note
        if idx in (0, len(lams) - 1):
            notes.append("the chosen strength lies at the end of the path; the choice is uncertain")
        if "no clear corner" in note:
            notes.append(note)
    else:
        lam = float(strength)
        if use_cvxpy:
            lower, upper = _bounds_vector(problem, bounds)
            x = solve_cvxpy(problem.A, problem.b, problem.L, [lam], lower=lower, upper=upper)[0]
        else:
            x = path.solve(lam)[0]
        idx = int(np.argmin(np.abs(np.log(lams / lam))))
        rule = "fixed"
        note = "strength fixed by the user"

    values = x * problem.scale
    n_h = problem.n_grid
    H = values[:n_h]
    k = n_h
    eta_fit = 0.0
    if problem.solvent:
        eta_fit = float(values[k])
        k += 1
    elif eta_s is not None:
        eta_fit = float(eta_s)
    G_e = float(values[k]) if plateau else 0.0

    # the fitted moduli from the weighted problem itself (rows are data-weighted: undo the weights)
    m = len(sweep)
    fitted = (problem.A @ x) * np.concatenate([sweep.storage, sweep.loss])
    storage_fit = fitted[:m]
    loss_fit = fitted[m:] + problem.loss_offset
    rel = np.concatenate([storage_fit / sweep.storage - 1.0, loss_fit / sweep.loss - 1.0])
    rms = float(np.sqrt(np.mean(rel * rel)))

    window = supported_window(sweep.omega)
    if not window[0] < window[1]:
        notes.append(
            f"the frequency range ({sweep.omega[0]:.3g}–{sweep.omega[-1]:.3g} rad/s) is narrower than e^π ≈ 23: "
            "the data determine the spectrum nowhere (Davies & Anderssen 1997)"
        )
    runs_p = min(runs_test(rel[:m]), runs_test(rel[m:])) if m >= 10 else 1.0
    if runs_p < 1e-3 and rms > 0.02:
        hint = ""
        if not plateau and sweep.storage[0] > sweep.loss[0]:
            hint = "; G' exceeds G'' at the lowest frequency — for a gel or solid try plateau=True (--plateau)"
        notes.append(f"the residuals are systematic (runs test p = {runs_p:.1g}, rms {rms:.1%}): the spectrum does "
                     f"not describe the data well{hint}")
    elif rms > 0.1:
        notes.append(f"the residuals are large (rms {rms:.0%}) but without systematic trend: noisy data; the "
                     "spectrum is only roughly determined")
    if not (np.all(np.isfinite(H)) and math.isfinite(eta_fit) and math.isfinite(G_e)):  # never report NaN
        raise SettingsError("the inversion produced non-finite values", sweep.source or sweep.name)
    for text in notes:
        warnings.warn(f"{sweep.source or sweep.name}: {text}", WeakResultWarning, stacklevel=2)

    lcurve = LCurve(
        strength=lams,
        residual_norm=res,
        solution_norm=sol,
        curvature=lc_choice.score,
        gcv=gcv_choice.score,
        index=idx,
        note=note,
    )
    settings = {
        "grid": int(n_h),
        "tau_range": [float(tau[0]), float(tau[-1])],
        "n_strengths": int(n_strengths),
        "select": select,
        "strength": strength if isinstance(strength, str) else float(strength),
        "solvent": bool(solvent),
        "plateau": bool(plateau),
        "eta_s_known": eta_s,
        "bounds": {k_: list(v) for k_, v in bounds.items()},
        "solver": "cvxpy" if use_cvxpy else "fast",
        "objective": objective(problem.A, problem.b, problem.L, x, lam),
    }
    return Spectrum(
        tau=tau,
        H=H,
        strength=lam,
        select=rule,
        window=window,
        eta_s=eta_fit,
        G_e=G_e,
        residual_rms=rms,
        omega=sweep.omega,
        storage=sweep.storage,
        loss=sweep.loss,
        storage_fit=storage_fit,
        loss_fit=loss_fit,
        lcurve=lcurve,
        sample=sweep.name,
        source=sweep.source,
        meta=dict(sweep.meta),
        warnings=tuple(notes),
        settings=settings,
    )


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
    elif "eta_s" in bounds:
        raise SettingsError("bounds on eta_s need the solvent term (solvent=True and no fixed eta_s)")
    if problem.plateau:
        if "G_e" in bounds:
            lo, hi = bounds["G_e"]
            lower[k], upper[k] = max(lo, 0.0) / problem.scale[k], hi / problem.scale[k]
    elif "G_e" in bounds:
        raise SettingsError("bounds on G_e need plateau=True")
    if np.any(lower > upper):
        raise SettingsError("a lower bound exceeds its upper bound")
    return lower, upper
