"""The invented demo archive: a scenario of our own, generated from published models plus noise.

The scenario: the quality lab of a (fictional) coatings maker keeps frequency
sweeps of its acrylic binder solutions.  A molecular-weight series of the
unentangled binder in a solvent (Rouse chains, finite-N form), a dilute retain
sample (Zimm chains, good solvent), two entangled controls (BSW-form spectra),
one batch that gelled in storage (a critical gel) and one corrupted export.
Every number here is invented; the models are published:

* Rouse, finite N: τ_p = τ_1 sin²(π/(2(N+1)))/sin²(pπ/(2(N+1))) (Rouse 1953;
  Ferry 1980, ch. 9), each mode of modulus G0 = cRT/M.
* Zimm: τ_p = τ_1 p^(−3ν) (Zimm 1956).
* BSW: H(τ) = G_N [n_e (τ/τ_max)^n_e + n_g (τ/τ_c)^(−n_g)], τ ≤ τ_max
  (Baumgaertel, Schausberger & Winter 1990).
* Critical gel: G' = S Γ(1−n) cos(nπ/2) ω^n, G'' = S Γ(1−n) sin(nπ/2) ω^n
  (Winter & Chambon 1986).

Beside the archive, the lab measured one of its entangled controls at three temperatures
(:func:`write_temperature_set`), for a master curve: G(ω; T) = b_T G(a_T ω; T_ref) with
b_T = T/T_ref and log a_T by the WLF equation with the constants C1 = 8.86, C2 = 101.6 K at T_ref
(Williams, Landel & Ferry 1955; Ferry 1980, ch. 11).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..data.write import atomic_write_text
from ..models.chains import mode_times
from ..spectrum.kernels import log_grid, modes_moduli, spectrum_moduli

__all__ = ["DemoSample", "demo_samples", "write_demo_archive", "temperature_samples", "write_temperature_set",
           "GAS_CONSTANT", "CORRUPTED", "WLF_DEMO"]


#: Molar gas constant R, J/(mol K) (CODATA 2018, exact).
GAS_CONSTANT = 8.314462618

#: The archive's deliberately corrupted exports, relative to its folder.
CORRUPTED = ("exports/batch-22-truncated.csv",)
#: The temperature set: T_ref (°C), the WLF constants at T_ref (C1, C2 in K) and the temperatures (°C).
WLF_DEMO = {"T_ref": 140.0, "C1": 8.86, "C2": 101.6, "temperatures": (120.0, 140.0, 160.0)}


@dataclass(frozen=True)
class DemoSample:
    """One invented sweep of the demo archive and the truth it was made from."""

    name: str
    kind: str
    omega: np.ndarray
    storage: np.ndarray
    loss: np.ndarray
    meta: dict
    truth: dict


def _noisy(rng: np.random.Generator, g: np.ndarray, level: float) -> np.ndarray:
    return g * (1.0 + level * rng.standard_normal(g.shape))


def demo_samples(seed: int = 20261201) -> list[DemoSample]:
    """Return the invented samples of the demo archive (deterministic for a seed)."""
    rng = np.random.default_rng(seed)
    T = 298.15
    omega = np.geomspace(0.01, 1000.0, 41)
    out: list[DemoSample] = []
    c = 120.0  # kg/m³, binder concentration of the series
    M_bead = 0.5  # kg/mol per Rouse sub-chain (invented)
    for M in (10.0, 20.0, 40.0, 80.0):
        N = int(round(M / M_bead))
        G0 = c * GAS_CONSTANT * T / M
        tau_R = 0.15 * (M / 10.0) ** 2  # τ_R ∝ M² (Rouse)
        eta_s = 0.05
        gp, gpp = modes_moduli(omega, np.full(N, G0), mode_times(tau_R, N), eta_s=eta_s)
        out.append(DemoSample(
            name=f"binder-M{int(M)}", kind="rouse", omega=omega,
            storage=_noisy(rng, gp, 0.015), loss=_noisy(rng, gpp, 0.015),
            meta={"sample": f"binder-M{int(M)}", "temperature": "25 C", "molecular_weight": f"{M:g} kg/mol",
                  "concentration": f"{c:g} kg/m3", "operator": "demo"},
            truth={"tau_R": tau_R, "G0": G0, "N": N, "eta_s": eta_s},
        ))
    # dilute retain: Zimm chains in a good solvent
    N, nu, tau_1, G0, eta_s = 60, 0.588, 0.5, 8.0, 0.4
    p = np.arange(1, N + 1)
    gp, gpp = modes_moduli(omega, np.full(N, G0), tau_1 * p ** (-3 * nu), eta_s=eta_s)
    out.append(DemoSample("retain-dilute", "zimm", omega, _noisy(rng, gp, 0.015), _noisy(rng, gpp, 0.015),
                          {"sample": "retain-dilute", "temperature": "25 C"},
                          {"tau_R": tau_1, "G0": G0, "nu": nu, "eta_s": eta_s}))
    # entangled controls: BSW spectra
    tau_fine = log_grid(1e-9, 1e4, 1400)
    for name, G_N, tau_max in (("control-entangled-A", 2.0e5, 8.0), ("control-entangled-B", 3.0e5, 30.0)):
        H = _bsw(tau_fine, G_N, tau_max)
        gp, gpp = spectrum_moduli(omega, tau_fine, H)
        out.append(DemoSample(name, "entangled", omega, _noisy(rng, gp, 0.015), _noisy(rng, gpp, 0.015),
                              {"sample": name, "temperature": "25 C"},
                              {"G_N": G_N, "tau_max": tau_max}))
    # a batch that gelled in storage: critical gel, n = 0.5
    n, S = 0.5, 300.0
    gam = math.gamma(1 - n)
    gp = S * gam * math.cos(n * math.pi / 2) * omega**n
    gpp = S * gam * math.sin(n * math.pi / 2) * omega**n
    out.append(DemoSample("batch-17-gelled", "gel", omega, _noisy(rng, gp, 0.015), _noisy(rng, gpp, 0.015),
                          {"sample": "batch-17-gelled", "temperature": "25 C", "note": "stored 9 months"},
                          {"n": n, "S": S}))
    return out


def _bsw(tau: np.ndarray, G_N: float, tau_max: float) -> np.ndarray:
    n_e, n_g, tau_c = 0.23, 0.67, 1e-6
    H = G_N * (n_e * (tau / tau_max) ** n_e + n_g * (tau / tau_c) ** (-n_g))
    H[tau > tau_max] = 0.0
    return H


def temperature_samples(seed: int = 20261201) -> list[DemoSample]:
    """The entangled control ``control-entangled-A`` measured at three temperatures (see the module docstring)."""
    rng = np.random.default_rng(seed + 1)
    omega = np.geomspace(0.01, 100.0, 33)
    tau_fine = log_grid(1e-9, 1e5, 1400)
    H = _bsw(tau_fine, 2.0e5, 8.0)
    T_ref, C1, C2 = WLF_DEMO["T_ref"], WLF_DEMO["C1"], WLF_DEMO["C2"]
    out = []
    for T in WLF_DEMO["temperatures"]:
        log_aT = -C1 * (T - T_ref) / (C2 + T - T_ref)
        bT = (T + 273.15) / (T_ref + 273.15)
        gp, gpp = spectrum_moduli(omega * 10**log_aT, tau_fine, H)
        name = f"control-entangled-A-{T:g}C"
        out.append(DemoSample(name, "temperature", omega, _noisy(rng, bT * gp, 0.015), _noisy(rng, bT * gpp, 0.015),
                              {"sample": "control-entangled-A", "temperature": f"{T:g} C"},
                              {"log_aT": log_aT, "bT": bT}))
    return out


def write_temperature_set(folder: str | Path, seed: int = 20261201) -> list[Path]:
    """Write the three-temperature sweeps of :func:`temperature_samples` into ``folder``; return the files."""
    folder = Path(folder)
    files = []
    for s in temperature_samples(seed):
        path = folder / f"{s.name}.csv"
        atomic_write_text(path, _sweep_text(s))
        files.append(path)
    return files


def _sweep_text(s: DemoSample) -> str:
    lines = [f"# {k}: {v}" for k, v in s.meta.items()]
    lines.append("omega [rad/s],G' [Pa],G'' [Pa]")
    lines += [f"{w:.6g},{a:.6g},{b:.6g}" for w, a, b in zip(s.omega, s.storage, s.loss)]
    return "\n".join(lines) + "\n"


def write_demo_archive(folder: str | Path, seed: int = 20261201) -> list[Path]:
    """Write the demo archive into ``folder``; return the sweep files, sorted.

    Besides the valid sweeps, ``exports/batch-22-truncated.csv`` is a corrupted
    export (cut off mid-row, with a stray instrument message), there to show
    how a bad file is reported.
    """
    folder = Path(folder)
    files = []
    for s in demo_samples(seed):
        sub = "series" if s.kind == "rouse" else "controls" if s.kind == "entangled" else "retains"
        path = folder / sub / f"{s.name}.csv"
        atomic_write_text(path, _sweep_text(s))
        files.append(path)
    bad = folder / CORRUPTED[0]
    atomic_write_text(bad, "# sample: batch-22\nomega [rad/s],G' [Pa],G'' [Pa]\n0.01,12.1,40.2\n0.0133,15.0\n"
                           "TRANSFER ABORTED\n")
    files.append(bad)
    return sorted(files)
