"""Property tests over stacks generated at random (hypothesis, derandomized: CI sees the same
examples every run).

1. Random VALID element stacks (1-3 subcells, gaps 0.7-2.2 eV sun side first, absorptance, ERE
   1e-6..1, optional J02, series and shunt resistance, an optional resistor, an optional tunnel
   junction whose peak is far above the photocurrent) keep these invariants:

   * every number of the summary is finite, and the JSON (written with allow_nan=False) loads;
   * the efficiency is below the detailed-balance limit of the same gaps (two bounds, below);
   * the power balance closes, and each subcell carries the MPP current at its MPP voltage by
     an independent single-diode solver (pvlib.pvsystem.i_from_v);
   * no subcell's photocurrent exceeds the photon current that reaches it, and the photocurrents
     add up to at most the photon current of the table above the smallest gap, integrated here
     by numpy directly on the pvlib table (not through siltandem's optics);
   * a tunnel junction with its peak above the photocurrent stays on its tunnel branch.
2. For ideal subcells (no series resistance, a negligible shunt) Jsc is proportional to the
   concentration and Voc rises by n kT/q per subcell per e-fold of concentration (Shockley).
3. Random bytes, random text and random TOML documents fed to load_stack raise StackError and
   nothing else; a random document that loads solves or raises StackError.

The two efficiency bounds
-------------------------
* Always: the string's power is the sum of its elements' powers V_i J (power balance); a
  passive element only dissipates, and a subcell delivers at most its own maximum power under the
  light it receives, which is at most that of the same step absorber in the radiative limit
  (ERE 1, no J02, no resistances; the same absorptance, hence the same photocurrent and
  J0,rad). So eta <= sum_i eta_i(ideal, same light): independently connected ideal subcells
  (W. Shockley, H. J. Queisser, J. Appl. Phys. 32 (1961) 510; A. De Vos, J. Phys. D 13 (1980)
  839).
* With absorptance 1 and no shunt: each element's voltage at any current below the limiting
  photocurrent is at most that of its ideal counterpart, and no current above it flows, so
  eta <= eta of the ideal series (2T) stack of the same gaps. This bound is NOT general: a
  top cell that lets light through can current-match a series stack and beat the ideal 2T stack
  of the same gaps (``test_a_semitransparent_top_cell_can_beat_the_ideal_series_stack``).
"""
import datetime
import json
import math
import os
import tempfile
from pathlib import Path

import numpy as np
import pytest
import scipy.constants as sc
from hypothesis import HealthCheck, event, given, settings, strategies as st

import pvlib
from siltandem.circuit.elements import Subcell, batch
from siltandem import StackError, run_stack, load_stack
from siltandem.laws.optics import step_absorber_photocurrents
from siltandem.solve.series import solve_string
from siltandem.materials.spectra import get_spectrum
from siltandem.stack.schema import CONDITION_KEYS, ELEMENT_SCHEMA, ISOTYPE_NUMBERS, ISOTYPE_TEXTS
from siltandem.stack.load import parse_stack


#: multiplies every example count, for a deeper local run (``SILTANDEM_HYPOTHESIS_SCALE=10
#: pytest tests/test_properties.py``); CI runs the default, 1
SCALE = max(1, int(os.environ.get("SILTANDEM_HYPOTHESIS_SCALE", "1")))


def ci_settings(examples):
    """Derandomized, no example database, no deadline: the same examples on every machine."""
    return settings(max_examples=examples * SCALE, derandomize=True, database=None,
                    deadline=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


AM15G = get_spectrum("am1.5g")
#: the ASTM G173-03 global column straight from pvlib, for the independent photon count
_TABLE = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
TABLE_NM = _TABLE.index.to_numpy(dtype=float)
TABLE_FLUX = (_TABLE["global"].to_numpy(dtype=float)
              / (sc.h * sc.c / (TABLE_NM * 1e-9)))            # photons m^-2 s^-1 nm^-1


def thermal_voltage(temperature_K):
    return sc.k * temperature_K / sc.e                         # CODATA 2018 through scipy


def photocurrents_A_m2(gaps, absorptances, suns):
    return [float(j) * suns for j in step_absorber_photocurrents(
        gaps, absorptances, AM15G.wavelength_nm, AM15G.photon_flux)]


# ---------------------------------------------------------------------------------------------
# strategies

@st.composite
def gap_lists(draw, count=None, low=0.7, high=2.2, step=0.08):
    """``count`` (default 1-3) gaps [eV] in [low, high], decreasing (sun side first), at least
    ``step`` apart."""
    count = count or draw(st.sampled_from([2, 3, 1]))
    gaps, top = [], high
    for k in range(count):
        gaps.append(draw(st.floats(low + step * (count - 1 - k), top)))
        top = gaps[-1] - step
    return gaps


GAPS = gap_lists()
LOG_UNIFORM = lambda lo, hi: st.floats(lo, hi).map(lambda x: 10.0 ** x)  # noqa: E731


@st.composite
def valid_stacks(draw, count):
    """A document (dict) of a valid 2T element stack of ``count`` subcells, with the numbers a
    test needs."""
    gaps = draw(gap_lists(count))
    suns = draw(st.sampled_from([1.0, 3.0, 30.0, 300.0]))
    temperature = draw(st.sampled_from([273.15, 298.15, 330.0]))
    cells = []
    for i, gap in enumerate(gaps):
        cell = {"kind": "subcell", "name": f"cell {i + 1}", "gap_eV": gap,
                "absorptance": draw(st.one_of(st.just(1.0), st.floats(0.3, 1.0))),
                "ere": draw(LOG_UNIFORM(-6, 0))}
        if draw(st.booleans()):
            cell["j02_mA_cm2"] = draw(LOG_UNIFORM(-11, -5))
        if draw(st.booleans()):
            cell["series_ohm_cm2"] = draw(st.floats(0.0, 3.0))
        if draw(st.booleans()):
            cell["shunt_ohm_cm2"] = draw(LOG_UNIFORM(3, 9))
        cells.append(cell)
    elements = list(cells)
    jph = photocurrents_A_m2(gaps, [c["absorptance"] for c in cells], suns)
    tunnel = None
    if len(cells) >= 2 and draw(st.booleans()):
        peak_V = draw(st.floats(0.05, 0.3))
        peak = draw(st.floats(3.0, 100.0)) * max(jph) / 10          # mA/cm2
        tunnel = {"kind": "tunnel", "name": "junction", "peak_mA_cm2": peak, "peak_V": peak_V,
                  "valley_mA_cm2": peak * draw(st.floats(0.01, 0.2)),
                  "valley_V": peak_V + draw(st.floats(0.2, 0.8))}
        elements.insert(1, tunnel)
    if draw(st.booleans()):
        elements.insert(draw(st.integers(0, len(elements))),
                        {"kind": "resistor", "name": "contacts",
                         "series_ohm_cm2": draw(st.floats(0.0, 2.0))})
    document = {"stack": {"name": "random"},
                "conditions": {"suns": suns, "temperature_K": temperature},
                "element": elements}
    return document, cells, jph, tunnel


def numbers(value, path="summary"):
    """Every number in a nested summary, with its path."""
    if isinstance(value, dict):
        for key, item in value.items():
            yield from numbers(item, f"{path}.{key}")
    elif isinstance(value, (list, tuple)):
        for k, item in enumerate(value):
            yield from numbers(item, f"{path}[{k}]")
    elif isinstance(value, (float, int, np.floating, np.integer)) and not isinstance(value, bool):
        yield path, float(value)


HEADLINE = ["efficiency_pct", "voc_V", "jsc_mA_cm2", "fill_factor_pct", "mpp_V", "mpp_mA_cm2",
            "mpp_W_m2", "power_balance_error_W_m2"]


def ideal_alone_power_W_m2(cells, jph, temperature):
    """Sum over subcells of each one's own maximum power in the radiative limit, same light."""
    total = 0.0
    for cell, j in zip(cells, jph):
        ideal = Subcell(cell["name"], batch(cell["gap_eV"]),
                        absorptance=batch(cell["absorptance"])).with_photocurrent(j)
        total += float(solve_string([ideal], temperature).mpp_W_m2[0])
    return total


def ideal_series_power_W_m2(gaps, suns, temperature):
    jph = photocurrents_A_m2(gaps, [1.0] * len(gaps), suns)
    ideal = [Subcell(f"ideal {k}", batch(g)).with_photocurrent(j)
             for k, (g, j) in enumerate(zip(gaps, jph))]
    return float(solve_string(ideal, temperature).mpp_W_m2[0])


# ---------------------------------------------------------------------------------------------
# 1. random valid stacks

@pytest.mark.parametrize("count", [1, 2, 3])
@ci_settings(12)
@given(data=st.data())
def test_random_valid_stacks_keep_every_invariant(count, data):
    document, cells, jph, tunnel = data.draw(valid_stacks(count), label="stack")
    result = run_stack(parse_stack(document), curve_points=40)
    summary = result.summary
    suns = document["conditions"]["suns"]
    temperature = document["conditions"]["temperature_K"]

    # finite numbers everywhere; the JSON contract loads and keeps the headline numbers
    bad = [path for path, x in numbers(summary) if not math.isfinite(x)]
    assert not bad, bad
    loaded = json.loads(result.to_json())
    assert all(loaded[k] is not None for k in HEADLINE)
    assert np.all(np.isfinite(result.iv.select_dtypes("number").to_numpy()))

    # detailed-balance bounds (see the module docstring for why each is a bound)
    irradiance = summary["conditions"]["irradiance_W_m2"]
    eta = summary["efficiency_pct"]
    bound_alone = 100 * ideal_alone_power_W_m2(cells, jph, temperature) / irradiance
    assert eta <= bound_alone * (1 + 1e-9)
    event(f"{len(cells)} subcells" + (", tunnel junction" if tunnel else ""))
    if all(c["absorptance"] == 1.0 and "shunt_ohm_cm2" not in c for c in cells):
        event("series (2T) ideal bound checked")
        gaps = [c["gap_eV"] for c in cells]
        bound_series = 100 * ideal_series_power_W_m2(gaps, suns, temperature) / irradiance
        assert eta <= bound_series * (1 + 1e-9)

    # an operating point in the power quadrant
    assert 0 < summary["mpp_V"] < summary["voc_V"]
    assert 0 < summary["mpp_mA_cm2"] <= summary["jsc_mA_cm2"] * (1 + 1e-9)
    assert 0 < summary["fill_factor_pct"] < 100

    # power balance: the solver's own check, and Kirchhoff's current law per subcell against
    # pvlib's single-diode solver (bracketed on the Bishop form, J. W. Bishop, Solar Cells 25
    # (1988) 73) at each subcell's MPP voltage
    power = summary["mpp_W_m2"]
    assert summary["power_balance_error_W_m2"] <= 1e-8 * max(power, 1e-3 * irradiance)
    assert not [w for w in summary["warnings"] if "power balance" in w]
    j_mpp = summary["mpp_mA_cm2"] * 10                       # A/m2
    voltages = {e["name"]: e["voltage_at_mpp_V"] for e in summary["elements"]}
    rows = {row["name"]: row for row in summary["subcells"]}
    for cell in cells:
        if "j02_mA_cm2" in cell:
            continue                                        # two diodes: outside pvlib's model
        row = rows[cell["name"]]
        arguments = (voltages[cell["name"]], row["photocurrent_mA_cm2"] * 10,
                     row["j01_mA_cm2"] * 10, cell.get("series_ohm_cm2", 0.0) * 1e-4,
                     cell.get("shunt_ohm_cm2", np.inf) * 1e-4, thermal_voltage(temperature))
        try:   # its Lambert W form overflows
            current = pvlib.pvsystem.i_from_v(*arguments, method="brentq")
        except ValueError:
            # pvlib's bracket (from its open-circuit estimate) misses the root when J01 is
            # comparable to the photocurrent: its Newton form then
            event("pvlib brentq could not bracket: its newton method checks instead")
            current = pvlib.pvsystem.i_from_v(*arguments, method="newton")
        assert float(current) == pytest.approx(j_mpp, rel=1e-6, abs=1e-6)
    for element in document["element"]:
        if element["kind"] == "resistor":                   # Ohm's law
            assert voltages[element["name"]] == pytest.approx(
                -j_mpp * element["series_ohm_cm2"] * 1e-4, rel=1e-12, abs=1e-15)

    # photon bookkeeping: no subcell gets more than the photons that reach it
    gaps = [c["gap_eV"] for c in cells]
    absorptances = [c["absorptance"] for c in cells]
    for i, cell in enumerate(cells):
        reaching = photocurrents_A_m2(gaps[:i + 1], absorptances[:i] + [1.0], suns)[i]
        assert rows[cell["name"]]["photocurrent_mA_cm2"] * 10 <= reaching * (1 + 1e-12)
    # ... and, counted independently of siltandem's optics (numpy trapezoid on the pvlib table,
    # up to the first tabulated wavelength at or beyond the smallest gap's edge), all subcells
    # together get no more than the table's photons above the smallest gap
    edge_nm = sc.h * sc.c / (min(gaps) * sc.e) * 1e9
    stop = np.searchsorted(TABLE_NM, edge_nm) + 1
    photons_A_m2 = sc.e * suns * np.trapezoid(TABLE_FLUX[:stop], TABLE_NM[:stop])
    total = sum(row["photocurrent_mA_cm2"] * 10 for row in summary["subcells"])
    assert total <= photons_A_m2 * (1 + 1e-12)
    # the top cell's share: between its absorptance times the photons up to the tabulated
    # wavelength just short of its edge and just beyond it
    top_edge = sc.h * sc.c / (gaps[0] * sc.e) * 1e9
    below = np.searchsorted(TABLE_NM, top_edge, side="right")
    low = sc.e * suns * np.trapezoid(TABLE_FLUX[:below], TABLE_NM[:below])
    high = sc.e * suns * np.trapezoid(TABLE_FLUX[:below + 1], TABLE_NM[:below + 1])
    top = rows[cells[0]["name"]]["photocurrent_mA_cm2"] * 10
    assert absorptances[0] * low * (1 - 1e-12) <= top <= absorptances[0] * high * (1 + 1e-12)

    # a tunnel junction far above the photocurrent is never driven past its peak
    if tunnel is not None:
        (row,) = summary["tunnel_junctions"]
        assert row["branch_at_mpp"] == "tunnel"
        assert summary["regime"] == "below peak"
        assert row["peak_over_largest_photocurrent"] > 1


def test_a_semitransparent_top_cell_can_beat_the_ideal_series_stack():
    """Why the ideal 2T stack of the same gaps is not a general bound: a 1.40 eV top cell over
    silicon takes three times the silicon's photocurrent; letting 30 % of its light through
    current-matches the string. Photocurrents and efficiencies are our own detailed-balance
    numbers; the mechanism (top-cell thinning to match currents) is common practice, no source."""
    def efficiency(absorptance):
        document = {"element": [
            {"kind": "subcell", "name": "top", "gap_eV": 1.40, "absorptance": absorptance},
            {"kind": "subcell", "name": "silicon", "gap_eV": 1.12}]}
        return run_stack(parse_stack(document), curve_points=20).summary["efficiency_pct"]

    assert efficiency(0.7) > efficiency(1.0) + 10
    irradiance = 1000.0                                     # AM1.5G nominal (IEC 60904-3)
    assert efficiency(1.0) == pytest.approx(
        100 * ideal_series_power_W_m2([1.40, 1.12], 1.0, 298.15) / irradiance, rel=1e-9)


# ---------------------------------------------------------------------------------------------
# 2. concentration: Jsc proportional to suns, Voc rising with log(suns)

@st.composite
def ideal_stacks(draw, with_j02=False):
    gaps = draw(GAPS)
    cells = []
    for i, gap in enumerate(gaps):
        cell = {"kind": "subcell", "name": f"cell {i + 1}", "gap_eV": gap,
                "absorptance": draw(st.floats(0.5, 1.0)), "ere": draw(LOG_UNIFORM(-6, 0)),
                "shunt_ohm_cm2": 1e10}                      # a negligible shunt, no Rs
        if with_j02:
            cell["j02_mA_cm2"] = draw(LOG_UNIFORM(-9, -5))
        cells.append(cell)
    temperature = draw(st.sampled_from([250.0, 298.15, 350.0, 400.0]))
    document = {"conditions": {"temperature_K": temperature}, "element": cells}
    return document, draw(st.floats(2.0, 2000.0))


@ci_settings(25)
@given(ideal_stacks())
def test_jsc_scales_with_suns_and_voc_with_log_suns_for_ideal_subcells(case):
    """Superposition: the photocurrent, hence Jsc of ideal cells, is linear in irradiance (F. A.
    Lindholm, J. G. Fossum, E. L. Burgess, IEEE Trans. Electron Devices 26 (1979) 165), up to
    the dark current of a reverse-biased limiting subcell (at most its J01 plus its shunt
    current). Shockley diode: Voc = sum_i (kT/q) ln(1 + Jph_i/J01_i), so Voc(X) - Voc(1) is
    N (kT/q) ln X up to terms of order J01/Jph (W. Shockley, Bell Syst. Tech. J. 28 (1949)
    435)."""
    document, suns = case
    stack = parse_stack(document)
    one = run_stack(stack, curve_points=20).summary
    many = run_stack(stack, suns=suns, curve_points=20).summary
    # in a series string the limiting subcell is reverse biased at short circuit and adds its
    # saturation current (and the shunt's) to Jph, which do not scale: allow for exactly those
    dark = sum(row["j01_mA_cm2"] + row["voc_alone_V"] / 1e10 * 1e3 for row in many["subcells"])
    assert abs(many["jsc_mA_cm2"] - suns * one["jsc_mA_cm2"]) <= (
        1e-9 * suns * one["jsc_mA_cm2"] + (suns + 1) * dark)
    for a, b in zip(one["subcells"], many["subcells"]):
        assert b["photocurrent_mA_cm2"] == pytest.approx(suns * a["photocurrent_mA_cm2"],
                                                         rel=1e-12)
    vt = thermal_voltage(document["conditions"]["temperature_K"])
    ratios = [row["photocurrent_mA_cm2"] / row["j01_mA_cm2"] for row in one["subcells"]]
    # Shockley per subcell at both concentrations, and the rise between them
    for summary, x in ((one, 1.0), (many, suns)):
        assert summary["voc_V"] == pytest.approx(sum(vt * math.log1p(x * r) for r in ratios),
                                                 abs=1e-6)
    rise = sum(vt * (math.log1p(suns * r) - math.log1p(r)) for r in ratios)
    assert many["voc_V"] - one["voc_V"] == pytest.approx(rise, abs=1e-6)
    # where every subcell is far from its dark limit (Jph/J01 > 1e6) the rise is n kT/q ln X
    # per subcell with n = 1
    if min(ratios) > 1e6:
        slope = (many["voc_V"] - one["voc_V"]) / (len(ratios) * vt * math.log(suns))
        assert slope == pytest.approx(1.0, abs=1e-5)


@ci_settings(8)
@given(ideal_stacks(with_j02=True))
def test_voc_slope_lies_between_one_and_two_thermal_voltages_with_a_second_diode(case):
    """Two-diode model (ideality 1 and 2; e.g. M. A. Green, Solar Cells, Prentice-Hall (1982),
    ch. 5): at open circuit Jph + J01 + J02 = J01 e^v + J02 e^(v/2) = g(v), v = qV/kT, and
    d ln g / dv lies in [1/2, 1]. So each subcell's Voc rises by between kT/q ln R and
    2 kT/q ln R, R = (X Jph + J01 + J02) / (Jph + J01 + J02) (ln R -> ln X when J0 << Jph),
    and the string's Voc (the sum at J = 0) between the sums."""
    document, suns = case
    stack = parse_stack(document)
    one = run_stack(stack, curve_points=20).summary
    many = run_stack(stack, suns=suns, curve_points=20).summary
    vt = thermal_voltage(document["conditions"]["temperature_K"])
    log_ratio = 0.0
    for row, cell in zip(one["subcells"], document["element"]):
        dark = row["j01_mA_cm2"] + cell["j02_mA_cm2"]
        log_ratio += math.log((suns * row["photocurrent_mA_cm2"] + dark)
                              / (row["photocurrent_mA_cm2"] + dark))
    rise = (many["voc_V"] - one["voc_V"]) / (vt * log_ratio)
    assert 1 - 1e-6 <= rise <= 2 + 1e-6
    event("second diode raises the slope above 1.01" if rise > 1.01 else "slope within 1.01")


# ---------------------------------------------------------------------------------------------
# 3. the loader meets garbage

def _load_only_stack_error(data):
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "fuzz.toml"
        path.write_bytes(data)
        try:
            return load_stack(path)
        except StackError as error:
            assert error.file == str(path) and error.problem and error.fix
            return None


@ci_settings(300)
@given(st.binary(max_size=600))
def test_random_bytes_raise_only_stack_error(data):
    _load_only_stack_error(data)


@ci_settings(300)
@given(st.text(max_size=400))
def test_random_text_raises_only_stack_error(text):
    _load_only_stack_error(text.encode("utf-8", "surrogatepass"))


def toml_value(value):
    """A small TOML writer for the generated documents (inline forms only)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        return ("inf" if value > 0 else "-inf") if math.isinf(value) else repr(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    if isinstance(value, (datetime.date, datetime.datetime)):
        return value.isoformat()
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{json.dumps(k)} = {toml_value(v)}"
                               for k, v in value.items()) + "}"
    raise TypeError(value)


def toml_document(document):
    lines = []
    for key, value in document.items():
        if not isinstance(value, (dict, list)) or (isinstance(value, list) and not all(
                isinstance(v, dict) for v in value)) or (isinstance(value, list) and not value):
            lines.append(f"{json.dumps(key)} = {toml_value(value)}")
    for key, value in document.items():
        if isinstance(value, dict):
            lines.append(f"[{json.dumps(key)}]")
            lines += [f"{json.dumps(k)} = {toml_value(v)}" for k, v in value.items()]
        elif isinstance(value, list) and value and all(isinstance(v, dict) for v in value):
            for table in value:
                lines.append(f"[[{json.dumps(key)}]]")
                lines += [f"{json.dumps(k)} = {toml_value(v)}" for k, v in table.items()]
    return "\n".join(lines) + "\n"


ELEMENT_KEYS = sorted({p.key for schema in ELEMENT_SCHEMA.values() for p in schema}
                      | set(ISOTYPE_NUMBERS) | set(ISOTYPE_TEXTS) | {"kind", "name", "string"})
WORDS = ["subcell", "resistor", "tunnel", "isotype", "forward", "reverse", "electron", "hole",
         "down", "up", "Si", "GaP", "GaAs", "Ga0.51In0.49P", "AlInP", "am1.5g", "am0", "x.csv",
         "", " "]
#: numbers at and around the edges of the schema's ranges
EDGES = [0, 1, 2, 4, -1, 0.3, 0.5, 1.12, 1.73, 4.0, 5.0, 10.0, 150, 1000, 1e-300, 1e-12, 1e-3,
         1e3, 1e4, 1e5, 1e9, 1e10, 1e18, 1e22, 1e30, 1e300]
SCALARS = st.one_of(
    st.floats(-1.0, 3.0), st.sampled_from(EDGES),
    st.floats(allow_nan=True, allow_infinity=True), st.integers(-(2**63), 2**63 - 1),
    st.booleans(), st.sampled_from(WORDS), st.text(max_size=8), st.dates())
VALUES = st.one_of(SCALARS, st.lists(SCALARS, max_size=3),
                   st.dictionaries(st.sampled_from(["a", "value", "kind"]), SCALARS, max_size=2))
#: valid element tables: a random document starts from some of them, then is mutated
GOOD_ELEMENTS = [
    {"kind": "subcell", "gap_eV": 1.73, "absorptance": 0.93, "ere": 0.02},
    {"kind": "subcell", "gap_eV": 1.12, "ere": 0.005, "shunt_ohm_cm2": 1e5, "j02_mA_cm2": 1e-9},
    {"kind": "resistor", "series_ohm_cm2": 0.4},
    {"kind": "tunnel", "peak_mA_cm2": 2000, "peak_V": 0.1, "valley_mA_cm2": 100,
     "valley_V": 0.5},
    {"kind": "isotype", "barrier_eV": 0.3, "built_in_V": 0.2, "alpha": 1.0},
    {"kind": "isotype", "upper_material": "GaP", "lower_material": "Si",
     "upper_doping_cm3": 1e18, "lower_doping_cm3": 1e17},
]


@st.composite
def mutated_documents(draw):
    """A valid document with 0-3 mutations: a key set to a random value, or deleted."""
    chosen = draw(st.lists(st.sampled_from(range(len(GOOD_ELEMENTS))), min_size=1, max_size=4))
    elements = [{**GOOD_ELEMENTS[k], "name": f"e{i}"} for i, k in enumerate(chosen)]
    if not any(e["kind"] == "subcell" for e in elements):
        elements.insert(0, {**GOOD_ELEMENTS[0], "name": "top"})
    document = {"stack": {"name": "fuzz"},
                "conditions": {"suns": 1.0, "temperature_K": 298.15, "terminals": 2},
                "element": elements}
    for _ in range(draw(st.integers(0, 3))):
        where = draw(st.sampled_from(["stack", "conditions", "top", "element"]))
        if where == "element":
            table = elements[draw(st.integers(0, len(elements) - 1))]
            key = draw(st.one_of(st.sampled_from(ELEMENT_KEYS), st.text(min_size=1, max_size=6)))
        elif where == "top":
            table = document
            key = draw(st.sampled_from(["stack", "conditions", "element", "layer", "rules",
                                        "coating", "extra"]))
        else:
            table = document[where] if isinstance(document.get(where), dict) else document
            key = draw(st.sampled_from(sorted(CONDITION_KEYS) + ["name", "notes", "sunz"]))
        if draw(st.booleans()) and key in table:
            del table[key]
        else:
            table[key] = draw(VALUES)
    return document


@ci_settings(40)
@given(mutated_documents())
def test_random_toml_documents_raise_only_stack_error_and_solve_when_they_load(document):
    stack = _load_only_stack_error(toml_document(document).encode("utf-8", "surrogatepass"))
    if stack is None or stack.layers:
        event("rejected by load_stack" if stack is None else "layer stack (not solved)")
        return                                              # layer stacks: being built
    try:
        result = run_stack(stack, curve_points=20)
    except StackError as error:
        event("loaded, rejected by run_stack")
        assert error.problem and error.fix
        return
    event("loaded and solved")
    loaded = json.loads(result.to_json())                   # allow_nan=False: never NaN text
    if loaded["efficiency_pct"] is None:                    # no answer: the result says why
        assert any("no operating point" in w for w in loaded["warnings"])


def test_the_generated_toml_reads_back():
    """The test's own TOML writer, against tomllib (Python's reference TOML reader)."""
    import tomllib

    document = {"stack": {"name": "a\"b\\c\u00e9"}, "conditions": {"suns": 2.5, "terminals": 4},
                "element": [{"kind": "subcell", "gap_eV": 1.1, "x": [1, True, "y"],
                             "d": datetime.date(2024, 1, 2), "t": {"a": -3}}],
                "top": 7}
    assert tomllib.loads(toml_document(document)) == document
