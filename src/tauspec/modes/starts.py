"""Starting sets of Maxwell modes: unregularized NNLS (Jakeš 1995), lumps, peaks and grown sets of a distribution."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..spectrum.kernels import kernel_values, loss_kernel, storage_kernel
from .problem import _Fit, _Problem

__all__ = []


def _nnls_start(prob: _Problem, per_decade_grid: float = 10.0) -> tuple[np.ndarray, np.ndarray, float, float]:
    """Unregularized NNLS on a fine log grid of discrete modes (Jakeš 1995): a sparse starting set."""
    from scipy.optimize import nnls

    w = prob.omega
    lo, hi = math.exp(prob.ln_tau_bounds[0]), math.exp(prob.ln_tau_bounds[1])
    # The grid covers the measured 1/ω range one decade beyond each end.
    t_lo = max(lo, 0.1 / w[-1])
    t_hi = min(hi, 10.0 / w[0])
    n = max(8, int(round(per_decade_grid * math.log10(t_hi / t_lo))) + 1)
    grid = np.geomspace(t_lo, t_hi, n)
    x = np.outer(w, grid)
    A = np.vstack([storage_kernel(x) / prob.storage[:, None], loss_kernel(x) / prob.loss[:, None]])
    cols = [A]
    if prob.solvent:
        cols.append(np.concatenate([np.zeros_like(w), w / prob.loss])[:, None])
    if prob.equilibrium_modulus:
        cols.append(np.concatenate([1.0 / prob.storage, np.zeros_like(w)])[:, None])
    A = np.hstack(cols)
    scale = np.linalg.norm(A, axis=0)
    scale[scale == 0] = 1.0
    sol, _ = nnls(A / scale, prob.target(), maxiter=50 * A.shape[1])
    sol = sol / scale
    g = sol[:n]
    k = n
    eta_s = G_e = 0.0
    if prob.solvent:
        eta_s = float(sol[k])
        k += 1
    if prob.equilibrium_modulus:
        G_e = float(sol[k])
    return grid, g, eta_s, G_e


def _clusters(grid: np.ndarray, c: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Merge runs of adjacent nonzero grid weights into single modes (sum of g, weighted mean ln τ)."""
    nz = c > 1e-12 * max(float(c.max(initial=0.0)), 1e-300)
    g_out, t_out = [], []
    i = 0
    while i < c.size:
        if not nz[i]:
            i += 1
            continue
        j = i
        while j + 1 < c.size and nz[j + 1]:
            j += 1
        cc = c[i:j + 1]
        g_out.append(cc.sum())
        t_out.append(math.exp(float(np.sum(cc * np.log(grid[i:j + 1])) / cc.sum())))
        i = j + 1
    return np.array(g_out), np.array(t_out)


def _lumps(grid: np.ndarray, c: np.ndarray, m: int) -> tuple[np.ndarray, np.ndarray]:
    """Split the support of a nonnegative distribution c(τ) into m equal ln τ bins and lump each bin."""
    nz = np.flatnonzero(c > 1e-3 * max(float(c.max(initial=0.0)), 1e-300))
    if nz.size == 0:
        return np.array([]), np.array([])
    u = np.log(grid)
    a, b = u[nz[0]], u[nz[-1]]
    if m == 1 or b - a < 1e-9:
        sel = slice(nz[0], nz[-1] + 1)
        cc = c[sel]
        return np.array([cc.sum()]), np.array([math.exp(float(np.sum(cc * u[sel]) / cc.sum()))])
    edges = np.linspace(a, b, m + 1)
    edges[-1] += 1e-9
    g_out, t_out = [], []
    for k in range(m):
        sel = (u >= edges[k]) & (u < edges[k + 1]) & (c > 0)
        if sel.any():
            cc = c[sel]
            g_out.append(cc.sum())
            t_out.append(math.exp(float(np.sum(cc * u[sel]) / cc.sum())))
    return np.array(g_out), np.array(t_out)


def _peaks(grid: np.ndarray, c: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """One mode per local maximum of c, holding the lump between the neighbouring minima."""
    n = c.size
    if n < 3:
        return _clusters(grid, c)
    maxima = [i for i in range(n) if c[i] > 0 and (i == 0 or c[i] >= c[i - 1]) and (i == n - 1 or c[i] > c[i + 1])]
    if not maxima:
        return np.array([]), np.array([])
    # boundaries at the smallest value between consecutive maxima
    bounds = [0]
    for a, b in zip(maxima[:-1], maxima[1:]):
        bounds.append(a + int(np.argmin(c[a:b + 1])))
    bounds.append(n)
    u = np.log(grid)
    g_out, t_out = [], []
    for k in range(len(maxima)):
        cc = c[bounds[k]:bounds[k + 1]]
        if cc.sum() > 0:
            g_out.append(cc.sum())
            t_out.append(math.exp(float(np.sum(cc * u[bounds[k]:bounds[k + 1]]) / cc.sum())))
    return np.array(g_out), np.array(t_out)


def _not_duplicate(tau: np.ndarray) -> np.ndarray:
    """False for a mode within 1 % in τ of an earlier one (the pair is one mode)."""
    keep = np.ones(tau.size, dtype=bool)
    order = np.argsort(tau)
    for a, b in zip(order[:-1], order[1:]):
        if tau[b] / tau[a] < 1.01:
            keep[b] = False
    return keep


def _grown_starts(prob: _Problem, prev: _Fit, step: float) -> tuple[list[Any], list[Any]]:
    """Starting sets of one more mode than ``prev``.

    Returns (inserts, splits): a new small mode below, above or in the widest gap; or one mode split in two
    half a step either side of it.
    """
    u = np.log(prev.tau)
    lo, hi = prob.ln_tau_bounds
    places = [max(lo + 1e-6, u[0] - step), min(hi - 1e-6, u[-1] + step)]
    if u.size > 1:
        gaps = np.diff(u)
        k = int(np.argmax(gaps))
        places.append(0.5 * (u[k] + u[k + 1]))
    inserts = []
    for p in places:
        nearest = int(np.argmin(np.abs(u - p)))
        inserts.append((np.append(prev.g, 0.1 * prev.g[nearest]), np.append(prev.tau, math.exp(p))))
    splits = []
    half = math.exp(step / 2)
    for k in range(u.size):
        g = np.concatenate([np.delete(prev.g, k), [prev.g[k] / 2, prev.g[k] / 2]])
        t = np.concatenate([np.delete(prev.tau, k), [prev.tau[k] / half, prev.tau[k] * half]])
        splits.append((g, t))
    return inserts, splits


def _gradient_insert(prob: _Problem, prev: _Fit, grid: np.ndarray) -> np.ndarray:
    """The times of ``prev`` plus one where a new mode lowers the misfit fastest.

    That is where b(τ)ᵀr, the derivative of ½‖r‖² in the strength of a new mode with column b(τ) at strength
    zero, is most negative over ``grid`` within the bounds; the widest gap (or e-fold above the longest
    mode) when no new mode lowers the misfit.
    """
    lo, hi = prob.ln_tau_bounds
    u = np.log(grid)
    u = u[(u > lo) & (u < hi)]
    r = prob.residuals(prev.x)
    n = prob.omega.size
    K, _ = kernel_values(prob.omega, np.exp(u))
    score = (r[:n] / prob.storage) @ K[:n] + (r[n:] / prob.loss) @ K[n:]
    k = int(np.argmin(score)) if score.size else -1
    if k >= 0 and score[k] < 0:
        return np.append(prev.tau, math.exp(u[k]))
    v = np.log(prev.tau)
    if v.size > 1:
        j = int(np.argmax(np.diff(v)))
        return np.append(prev.tau, math.exp(0.5 * (v[j] + v[j + 1])))
    return np.append(prev.tau, math.exp(min(hi - 1e-6, v[-1] + 1.0)))
