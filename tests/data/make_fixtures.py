"""Write the reader's fixture files: one file per export shape the reader must handle.

    python tests/data/make_fixtures.py

Invented data in a scenario of our own: the quality lab of a fictional sealant maker measures a hot-melt
adhesive (lot HM-12) in small-amplitude oscillatory shear. The moduli come from a three-mode generalized Maxwell
model (Ferry 1980, *Viscoelastic Properties of Polymers*, 3rd ed., ch. 3; see docs/references.md) with invented
strengths and times; the sweeps at 130 and 170 °C are the 150 °C one shifted by invented factors a_T. Values are
written with six significant digits, as instruments write them. tests/test_reader_fixtures.py recomputes the
model at the frequencies read and compares.
"""

from __future__ import annotations

import math
from pathlib import Path

HERE = Path(__file__).resolve().parent

#: Maxwell strengths g_i (Pa) and times τ_i (s) at 150 °C, and the invented shift factors of the other steps.
MODES = ((8.0e4, 2.0e-3), (2.0e4, 5.0e-2), (3.0e3, 1.5))
SHIFT = {130.0: 3.2, 150.0: 1.0, 170.0: 0.38}
#: 16 angular frequencies, 0.1–100 rad/s, five per decade, high to low as many rheometers sweep.
OMEGA = [10 ** (2 - k / 5) for k in range(16)]


def maxwell(omega: float, a_t: float = 1.0) -> tuple[float, float]:
    """G'(ω) and G''(ω) of the generalized Maxwell model with times a_T·τ_i (Ferry 1980, ch. 3)."""
    gp = gpp = 0.0
    for g, tau in MODES:
        x = omega * tau * a_t
        gp += g * x * x / (1 + x * x)
        gpp += g * x / (1 + x * x)
    return gp, gpp


def g6(v: float) -> str:
    """Six significant digits, as an instrument writes them."""
    return f"{v:.6g}"


def rows(a_t: float = 1.0, omega=OMEGA):
    """(ω, G', G'') at every frequency."""
    for w in omega:
        gp, gpp = maxwell(w, a_t)
        yield w, gp, gpp


def write(name: str, lines: list[str], encoding: str = "utf-8") -> None:
    (HERE / name).write_bytes(("\n".join(lines) + "\n").encode(encoding))


def quoted(fields) -> str:
    return ",".join(f'"{f}"' for f in fields)


def comma_decimal(v: float) -> str:
    return g6(v).replace(".", ",")


def main() -> None:
    write("quoted_kpa.csv", [quoted(["Angular Frequency (rad/s)", "Storage Modulus (kPa)", "Loss Modulus (kPa)"])]
          + [quoted([g6(w), g6(a / 1e3), g6(b / 1e3)]) for w, a, b in rows()])
    write("quoted_mpa.csv", [quoted(["Angular Frequency (rad/s)", "Storage Modulus (MPa)", "Loss Modulus (MPa)",
                                     "Complex Viscosity (Pa·s)"])]
          + [quoted([g6(w), g6(a / 1e6), g6(b / 1e6), g6(math.hypot(a, b) / w)]) for w, a, b in rows()])
    write("quoted_hz.csv", [quoted(["Frequency (Hz)", "G' (Pa)", "G'' (Pa)"])]
          + [quoted([g6(w / (2 * math.pi)), g6(a), g6(b)]) for w, a, b in rows(omega=[
              2 * math.pi * float(g6(w / (2 * math.pi))) for w in OMEGA])])
    write("cp1252_units.csv",
          ["Point;Angular Frequency [rad/s];Storage Modulus [Pa];Loss Modulus [Pa];Temperature [°C];Torque [µN·m]"]
          + [f"{i + 1};{comma_decimal(w)};{comma_decimal(a)};{comma_decimal(b)};150,0;{comma_decimal(0.02 * a)}"
             for i, (w, a, b) in enumerate(rows())], encoding="cp1252")
    write("preamble_text.csv",
          ["Sealant lab, rotational rheometer 2", "Frequency sweep of hot-melt lot HM-12",
           "Sample: HM-12", "Operator: R. Ionescu", "Temperature: 150 °C", "Geometry: plates 25 mm, gap 1.000 mm", "",
           "Angular Frequency (rad/s),Storage Modulus (Pa),Loss Modulus (Pa)"]
          + [f"{g6(w)},{g6(a)},{g6(b)}" for w, a, b in rows()])
    write("preamble_semicolon.csv",
          ["Sample;HM-12", "Temperature;150 °C", "Strain;1 %", "",
           "Angular Frequency;Storage Modulus;Loss Modulus", "rad/s;kPa;kPa"]
          + [f"{comma_decimal(w)};{comma_decimal(a / 1e3)};{comma_decimal(b / 1e3)}" for w, a, b in rows()])
    missing = {2: "", 5: "NaN", 9: "-", 12: "--"}
    write("missing_cells.csv", ["omega [rad/s],G' [Pa],G'' [Pa]"]
          + [f"{g6(w)},{missing.get(i, g6(a))},{g6(b)}" for i, (w, a, b) in enumerate(rows())])
    write("time_column.csv", ["t [s],omega [rad/s],G' [Pa],G'' [Pa],T [°C]"]
          + [f"{12.5 * (i + 1):g},{g6(w)},{g6(a)},{g6(b)},150.0" for i, (w, a, b) in enumerate(rows())])
    write("hz_and_rads.csv", ["Frequency (Hz),Angular Frequency (rad/s),Storage Modulus (Pa),Loss Modulus (Pa)"]
          + [f"{g6(w / (2 * math.pi))},{g6(w)},{g6(a)},{g6(b)}" for w, a, b in rows()])
    slip = 6  # the rad/s value of this row doubled (a typing slip): the Hz column disagrees on line 8
    write("hz_rads_disagree.csv", ["Frequency (Hz),Angular Frequency (rad/s),Storage Modulus (Pa),Loss Modulus (Pa)"]
          + [f"{g6(w / (2 * math.pi))},{g6(2 * w if i == slip else w)},{g6(a)},{g6(b)}"
             for i, (w, a, b) in enumerate(rows())])
    blocks = ["Hot-melt HM-12: frequency sweeps at three temperatures"]
    for k, temp in enumerate(sorted(SHIFT), start=1):
        blocks += ["", f"Step {k}  {temp:.0f} °C", "Angular Frequency\tStorage Modulus\tLoss Modulus\tTemperature",
                   "rad/s\tPa\tPa\t°C"]
        blocks += [f"{g6(w)}\t{g6(a)}\t{g6(b)}\t{temp + 0.1 * (i % 3 - 1):.1f}"
                   for i, (w, a, b) in enumerate(rows(SHIFT[temp]))]
    write("three_blocks.txt", blocks)
    drift = [149.6 + 0.7 * i / 15 for i in range(16)]
    write("temperature_drift.csv", ["omega [rad/s],G' [Pa],G'' [Pa],T [°C]"]
          + [f"{g6(w)},{g6(a)},{g6(b)},{t:.2f}" for (w, a, b), t in zip(rows(), drift)])
    write("units_row.tsv", ["omega\tG'\tG''", "rad/s\tkPa\tkPa"]
          + [f"{g6(w)}\t{g6(a / 1e3)}\t{g6(b / 1e3)}" for w, a, b in rows()])
    write("in_kpa.csv", ["Angular frequency in rad/s;Storage modulus in kPa;Loss modulus in kPa"]
          + [f"{comma_decimal(w)};{comma_decimal(a / 1e3)};{comma_decimal(b / 1e3)}" for w, a, b in rows()])
    polar = [(w, math.hypot(a, b), math.atan2(b, a)) for w, a, b in rows()]
    write("gstar_phase_deg.csv", ["Angular Frequency (rad/s),Complex Modulus (Pa),Phase Angle (°)"]
          + [f"{g6(w)},{g6(g)},{g6(math.degrees(d))}" for w, g, d in polar])
    write("gstar_phase_rad.csv", ["ω [s⁻¹],|G*| [kPa],δ [rad]"]
          + [f"{g6(w)},{g6(g / 1e3)},{g6(d)}" for w, g, d in polar])
    write("gstar_phase_nounit.csv", ["omega [rad/s],|G*| [Pa],delta"]
          + [f"{g6(w)},{g6(g)},{g6(d)}" for w, g, d in polar])
    write("utf16_bom.txt", ["Angular Frequency (rad/s)\tStorage Modulus (Pa)\tLoss Modulus (Pa)\tTemperature (°C)"]
          + [f"{g6(w)}\t{g6(a)}\t{g6(b)}\t150.0" for w, a, b in rows()], encoding="utf-16")
    write("whitespace_aligned.dat", [f"{'omega [rad/s]':>16}{'G′ [Pa]':>16}{'G″ [Pa]':>16}"]
          + [f"{g6(w):>16}{g6(a):>16}{g6(b):>16}" for w, a, b in rows()])
    write("utf8_bom_semicolon.csv", ['"Angular Frequency [1/s]";"Storage Modulus [Pa]";"Loss Modulus [Pa]"']
          + [f'"{comma_decimal(w)}";"{comma_decimal(a)}";"{comma_decimal(b)}"' for w, a, b in rows()],
          encoding="utf-8-sig")
    verbose = ["Point No.", "Time (s)", "Angular Frequency (rad/s)", "Storage Modulus (kPa)", "Loss Modulus (kPa)",
               "Loss Factor", "Complex Modulus (kPa)", "Complex Viscosity (Pa·s)", "Phase Angle (°)", "Strain (%)",
               "Stress (Pa)", "Torque (µN·m)", "Normal Force (N)", "Temperature (°C)"]
    body = []
    for i, (w, a, b) in enumerate(rows()):
        g = math.hypot(a, b)
        body.append(quoted([str(i + 1), f"{30.0 * (i + 1):g}", g6(w), g6(a / 1e3), g6(b / 1e3), g6(b / a),
                            g6(g / 1e3), g6(g / w), g6(math.degrees(math.atan2(b, a))), "1", g6(0.01 * g),
                            g6(0.2 * g), "0.05", "150.0"]))
    write("verbose_columns.csv", [quoted(verbose)] + body)
    multi = ["omega [rad/s],G' [Pa],G'' [Pa],T [°C]"]
    for temp in sorted(SHIFT):
        multi += [f"{g6(w)},{g6(a)},{g6(b)},{temp:.1f}" for w, a, b in rows(SHIFT[temp])]
    write("temperature_column.csv", multi)


if __name__ == "__main__":
    main()
