"""The reader's guarantee: the right SI numbers or our one-line refusal, never a different number.

Hypothesis writes the same known SI sweep in many export shapes — quoting, unit brackets, unit spellings, a units
row, column order, extra columns, separators, decimal comma, encodings, a preamble — and reads it back.  Unit
factors are the SI definitions (BIPM 2019, *The International System of Units*, 9th ed.: prefixes k = 1e3,
M = 1e6, G = 1e9, m = 1e-3; 1 Hz = 1 cycle per second, ω = 2πf; 1° = π/180 rad; docs/references.md); the
complex-modulus form is G' = |G*| cos δ, G'' = |G*| sin δ (Ferry 1980, ch. 1).  A shape the reader documents as
accepted must read (docs/reader.md); a shape that leaves a unit open (``Frequency (1/s)``, ``mpa``, a phase
angle without a unit) may be refused, but never read as another number.
"""

import math
import warnings

import numpy as np
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from tauspec import parse_sweeps_text, read_sweep
from tauspec.errors import EncodingGuessWarning, SweepError

TWO_PI = 2 * math.pi
MODULUS_UNITS = {"Pa": 1.0, "mPa": 1e-3, "kPa": 1e3, "MPa": 1e6, "GPa": 1e9}
ANGULAR_UNITS = {"rad/s": 1.0, "rad s⁻¹": 1.0, "1/s": 1.0, "s⁻¹": 1.0, "s^-1": 1.0, "rad/sec": 1.0}
CYCLIC_UNITS = {"Hz": TWO_PI, "kHz": TWO_PI * 1e3, "mHz": TWO_PI * 1e-3}
OPEN_FREQUENCY_UNITS = {"1/s": TWO_PI, "s⁻¹": TWO_PI}  # after "frequency": cycles or radians per second?
ANGLE_UNITS = {"°": math.pi / 180, "deg": math.pi / 180, "degrees": math.pi / 180, "rad": 1.0}
#: Spellings that leave a unit open: the reader may refuse them (it must not read them as a number).
AMBIGUOUS = {"mpa", "1/s after frequency", "no frequency unit", "no angle unit", "two temperature columns"}

NAMES = {
    "omega": ["omega", "ω", "Angular Frequency", "angular frequency", "w"],
    "freq": ["f", "Frequency", "freq"],
    "storage": ["G'", "G′", "Storage Modulus", "storage modulus", "Gp", "G' storage modulus"],
    "loss": ["G''", "G″", "Loss Modulus", "loss modulus", "Gpp"],
    "gstar": ["|G*|", "G*", "Complex Modulus"],
    "delta": ["delta", "δ", "Phase Angle", "phase angle"],
}
EXTRAS = [("t", "s", lambda i: 10.0 * (i + 1)), ("Time", "s", lambda i: 30.0 * i),
          ("Temperature", "°C", lambda i: 150.0), ("T", "K", lambda i: 423.15), ("Strain", "%", lambda i: 1.0),
          ("Torque", "µN·m", lambda i: 12.5 + i), ("Complex Viscosity", "Pa·s", lambda i: 300.0 / (i + 1)),
          ("Point No.", None, lambda i: float(i + 1)), ("Loss Factor", None, lambda i: 0.8)]


@st.composite
def sweeps(draw):
    n = draw(st.integers(6, 12))
    exps = draw(st.lists(st.floats(-2.0, 2.0), min_size=n, max_size=n, unique=True).filter(
        lambda xs: min(np.diff(np.sort(xs))) > 1e-3))
    omega = 10.0 ** np.sort(np.array(exps))
    storage = 10.0 ** np.array(draw(st.lists(st.floats(-1.0, 6.0), min_size=n, max_size=n)))
    ratio = 10.0 ** np.array(draw(st.lists(st.floats(-3.0, 3.0), min_size=n, max_size=n)))
    return omega, storage, storage * ratio


@st.composite
def shapes(draw):
    """The choices one export makes; ``ambiguous`` names the open unit, if any."""
    shape = {"form": draw(st.sampled_from(["pair", "polar"])),
             "freq": draw(st.sampled_from(["angular", "cyclic", "both"])),
             "style": draw(st.sampled_from(["()", "[]", " in ", "units row"])),
             "sep": draw(st.sampled_from([",", ";", "\t", "  "])),
             "quote": draw(st.sampled_from(["none", "all", "header"])),
             "encoding": draw(st.sampled_from(["utf-8", "utf-8-sig", "utf-16", "cp1252"])),
             "preamble": draw(st.sampled_from(["none", "hash", "key: value", "title"])),
             "modulus_unit": draw(st.sampled_from([*MODULUS_UNITS, None, "mpa"])),
             "angular_unit": draw(st.sampled_from([*ANGULAR_UNITS, None])),
             "cyclic_unit": draw(st.sampled_from([*CYCLIC_UNITS, *OPEN_FREQUENCY_UNITS, None])),
             "angle_unit": draw(st.sampled_from([*ANGLE_UNITS, None])),
             "extras": draw(st.lists(st.sampled_from(range(len(EXTRAS))), unique=True, max_size=3)),
             "names": draw(st.integers(0, 10**6))}
    shape["decimal_comma"] = shape["sep"] != "," and draw(st.booleans())
    if shape["quote"] != "none" and shape["sep"] == "  ":
        shape["sep"] = "\t"
    shape["order"] = draw(st.permutations(range(8)))
    return shape


def _pick(options, seed, k):
    return options[(seed // (7 ** k)) % len(options)]


def _columns(shape, omega, storage, loss):
    """(name, unit or None, SI values, factor) of every column, and the set of open units."""
    open_units = set()
    seed = shape["names"]
    cols = []
    if shape["freq"] in ("angular", "both"):
        name = _pick(NAMES["omega"], seed, 0)
        unit = shape["angular_unit"]
        cols.append((name, unit, omega, 1.0))
    if shape["freq"] in ("cyclic", "both"):
        name = _pick(NAMES["freq"], seed, 1)
        unit = shape["cyclic_unit"]
        if unit is None:
            open_units.add("no frequency unit")
        if unit in OPEN_FREQUENCY_UNITS:
            open_units.add("1/s after frequency")
        cols.append((name, unit, omega, CYCLIC_UNITS.get(unit, TWO_PI)))
    mu = shape["modulus_unit"]
    factor = 1e6 if mu == "mpa" else MODULUS_UNITS.get(mu, 1.0)
    if mu == "mpa":
        open_units.add("mpa")
    if shape["form"] == "pair":
        cols.append((_pick(NAMES["storage"], seed, 2), mu, storage, factor))
        cols.append((_pick(NAMES["loss"], seed, 3), mu, loss, factor))
    else:
        au = shape["angle_unit"]
        delta = np.arctan2(loss, storage)
        if au is None:
            open_units.add("no angle unit")  # read as degrees only when a value exceeds π, else refused
        af = ANGLE_UNITS.get(au, math.pi / 180 if au is None else 1.0)
        cols.append((_pick(NAMES["gstar"], seed, 2), mu, np.hypot(storage, loss), factor))
        cols.append((_pick(NAMES["delta"], seed, 3), au, delta, af))
    if {2, 3} <= set(shape["extras"]):
        open_units.add("two temperature columns")  # °C and K columns side by side: refused as two temperatures
    return cols, open_units


def _fmt(value, decimal_comma):
    text = repr(float(value))
    return text.replace(".", ",") if decimal_comma else text


def _field(name, unit, style):
    if unit is None or style == "units row":
        return name
    return f"{name} ({unit})" if style == "()" else f"{name} [{unit}]" if style == "[]" else f"{name} in {unit}"


def write_export(shape, omega, storage, loss):
    """The file's text and the set of open units it holds."""
    cols, open_units = _columns(shape, omega, storage, loss)
    assert open_units <= AMBIGUOUS
    n = len(omega)
    file_cols = [(name, unit, [_fmt(v / f, shape["decimal_comma"]) for v in values]) for name, unit, values, f in cols]
    for k in shape["extras"]:
        name, unit, fn = EXTRAS[k]
        file_cols.append((name, unit, [_fmt(fn(i), shape["decimal_comma"]) for i in range(n)]))
    order = [i for i in shape["order"] if i < len(file_cols)] + [i for i in range(len(file_cols)) if i >= 8]
    file_cols = [file_cols[i] for i in order]
    if shape["style"] == " in " and any(u is not None and " " in u for _, u, _ in file_cols):
        shape = dict(shape, style="[]")  # "in rad s⁻¹" is two words: written in brackets instead
    sep = shape["sep"]

    def line(cells, quoted):
        return sep.join(f'"{c}"' if quoted else c for c in cells)

    header = [_field(name, unit, shape["style"]) for name, unit, _ in file_cols]
    lines = {"none": [], "hash": ["# sample: lot 7", "# operator: A. N. Other"],
             "key: value": ["Sample: lot 7", "Operator: A. N. Other", ""],
             "title": ["Frequency sweep of lot 7", ""]}[shape["preamble"]]
    lines.append(line(header, shape["quote"] != "none"))
    if shape["style"] == "units row":
        units = [unit or "-" if sep == "  " else unit or "" for _, unit, _ in file_cols]
        lines.append(line(units, shape["quote"] == "all"))
    for i in range(n):
        lines.append(line([values[i] for _, _, values in file_cols], shape["quote"] == "all"))
    return "\n".join(lines) + "\n", open_units


def _encode(text, encoding):
    try:
        return text.encode(encoding), encoding
    except UnicodeEncodeError:  # cp1252 has no superscript minus: such a file is written as UTF-8
        return text.encode("utf-8"), "utf-8"


def _check(path, shape, omega, storage, loss):
    text, open_units = write_export(shape, omega, storage, loss)
    raw, encoding = _encode(text, shape["encoding"])
    path.write_bytes(raw)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            sweep = read_sweep(path)
        except SweepError as exc:
            line = exc.one_line()
            assert line.startswith(str(path)) and "\n" not in line
            assert open_units, f"an accepted shape was refused: {line}\n{text}"
            return "refused"
    guessed = [w for w in caught if issubclass(w.category, EncodingGuessWarning)]
    assert bool(guessed) == (encoding == "cp1252" and not text.isascii()), [str(w.message) for w in caught]
    assert not [w for w in caught if not issubclass(w.category, EncodingGuessWarning)], \
        [str(w.message) for w in caught]
    np.testing.assert_allclose(sweep.omega, omega, rtol=1e-9)
    np.testing.assert_allclose(sweep.storage, storage, rtol=1e-9)
    np.testing.assert_allclose(sweep.loss, loss, rtol=1e-9)
    return "read"


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=sweeps(), shape=shapes())
def test_right_numbers_or_our_refusal(tmp_path, data, shape):
    event(_check(tmp_path / "export.csv", shape, *data))


def test_the_generator_covers_both_outcomes(tmp_path):
    # The property above would pass if every file were refused; these fixed shapes must read, and the open ones
    # must not read as another number.
    omega = np.geomspace(0.1, 100, 8)
    storage, loss = 1e3 * omega ** 0.5, 2e3 * omega ** 0.3
    base = {"form": "pair", "freq": "angular", "style": "()", "sep": ",", "quote": "all", "encoding": "utf-8",
            "preamble": "none", "modulus_unit": "kPa", "angular_unit": "rad/s", "cyclic_unit": "Hz",
            "angle_unit": "deg", "extras": [0, 2], "names": 12345, "decimal_comma": False,
            "order": list(range(8))}
    assert _check(tmp_path / "a.csv", base, omega, storage, loss) == "read"
    assert _check(tmp_path / "b.csv", dict(base, modulus_unit="mpa"), omega, storage, loss) == "refused"
    assert _check(tmp_path / "c.csv", dict(base, freq="cyclic", cyclic_unit=None), omega, storage, loss) == "refused"
    # δ up to 63° written without a unit: more than π, so degrees, and read right
    assert _check(tmp_path / "e.csv", dict(base, form="polar", angle_unit=None), omega, storage, loss) == "read"
    assert _check(tmp_path / "d.csv", dict(base, sep=";", decimal_comma=True, encoding="cp1252", style="units row",
                                           freq="both", quote="none"), omega, storage, loss) == "read"


@settings(max_examples=60, deadline=None)
@given(data=sweeps(), unit=st.sampled_from(list(MODULUS_UNITS)))
def test_quoted_units_are_read(data, unit):
    # The silently wrong number: a quoted header's unit ignored.
    omega, storage, loss = data
    f = MODULUS_UNITS[unit]
    rows = "\n".join(f'"{float(w)!r}","{float(a / f)!r}","{float(b / f)!r}"' for w, a, b in zip(omega, storage, loss))
    text = f'"Angular Frequency (rad/s)","Storage Modulus ({unit})","Loss Modulus ({unit})"\n{rows}\n'
    (sweep,) = parse_sweeps_text(text, source="quoted.csv")
    np.testing.assert_allclose(sweep.storage, storage, rtol=1e-9)
    np.testing.assert_allclose(sweep.loss, loss, rtol=1e-9)
