"""Figure of a bead-spring diagnosis (matplotlib, Agg backend, imported only when a figure is drawn)."""

from __future__ import annotations

import os

import numpy as np

from ...models.chains import chain_moduli
from .text import plain_text

__all__ = ["plot_diagnosis"]


def plot_diagnosis(diag, path: str | os.PathLike[str]) -> None:
    """Write a three-panel PNG of a :class:`~tauspec.diagnosis.Diagnosis`.

    Left: the data with the Rouse fit and the better Zimm fit.  Middle: mode times τ_j against j on log
    axes (the discrete modes of the data and the fitted Rouse chain) with slopes −2 (Rouse) and −1.5
    (Zimm θ) drawn through τ_R.  Right: the recovered H(τ) with the τ^(−1/2) reference of the Rouse region.
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, axes = plt.subplots(1, 3, figsize=(15, 4.6))
    w = diag.omega
    wd = np.geomspace(w[0], w[-1], 200)
    ax = axes[0]
    ax.loglog(w, diag.storage, "o", ms=4, color="C0", label="G' data")
    ax.loglog(w, diag.loss, "s", ms=4, color="C1", label="G'' data")
    rouse = diag.fits["rouse"]
    zname = min(("zimm_theta", "zimm_good"), key=lambda m: diag.fits[m].bic)
    for fit, style, label in ((rouse, "-", "Rouse"), (diag.fits[zname], "--", zname.replace("_", " "))):
        gp, gpp = chain_moduli(wd, fit.G0, fit.tau1, fit.N, a=fit.a, form=fit.form, eta_s=fit.eta_s)
        ax.loglog(wd, gp, style, color="C0", lw=1)
        ax.loglog(wd, gpp, style, color="C1", lw=1, label=f"{label} fit (rms {fit.rms:.3f})")
    ax.set_xlabel("ω (rad/s)")
    ax.set_ylabel("G', G'' (Pa)")
    ax.set_title(f"{plain_text(diag.sample)}: {diag.verdict}")
    ax.legend(fontsize=8)

    ax = axes[1]
    if len(diag.modes_tau) and diag.G0 > 0:
        # a discrete mode that merges several chain modes sits at its cumulative mode count Σg/G0
        g = np.asarray(diag.modes_g)
        j = 0.5 + (np.cumsum(g) - g / 2) / diag.G0
        ok = j >= 0.5
        ax.loglog(np.maximum(j[ok], 1.0), diag.modes_tau[ok], "o", label="discrete modes of the data at Σg/G0")
    n_show = int(min(max(round(rouse.N), 1), 60))
    jj = np.arange(1, n_show + 1)
    ax.loglog(jj, rouse.mode_times()[:n_show], ".", color="0.5", label="fitted Rouse chain")
    ax.loglog(jj, diag.tau_R * jj ** -2.0, "-", color="k", lw=1, label="slope −2 (Rouse)")
    ax.loglog(jj, diag.tau_R * jj ** -1.5, "--", color="k", lw=1, label="slope −1.5 (Zimm θ)")
    ax.set_xlabel("mode index j")
    ax.set_ylabel("τ_j (s)")
    ax.legend(fontsize=8)

    ax = axes[2]
    sp = diag.spectrum
    if sp is not None:
        tau = np.asarray(sp.tau)
        H = np.asarray(sp.H)
        pos = H > 1e-4 * max(float(H.max()), 1e-300)  # hide the numerically zero tail
        ax.loglog(tau[pos], H[pos], "-", label="H(τ)")
        lo, hi = sp.window
        if lo < hi:
            ax.axvspan(lo, hi, color="0.92", zorder=0, label="supported window")
        t_ref = np.geomspace(max(lo, tau[0]), min(diag.tau_R, tau[-1]), 50)
        ax.loglog(t_ref, 0.5 * diag.G0 * (diag.tau_R / t_ref) ** 0.5, "k--", lw=1, label="(G0/2)(τ_R/τ)^(1/2)")
        ax.legend(fontsize=8)
    else:
        ax.text(0.5, 0.5, "continuous spectrum not available", ha="center", va="center", transform=ax.transAxes)
    ax.set_xlabel("τ (s)")
    ax.set_ylabel("H (Pa)")
    fig.tight_layout()
    fig.savefig(os.fspath(path), dpi=110)
    plt.close(fig)
