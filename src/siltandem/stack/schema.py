"""The stack-file schema: every numeric key with its unit, range and default, and the checks of
one value, shared by file keys, command-line options and study arguments (one schema, not two).

No parsing of whole files here (stack.load does that) and no physics: the Esaki law is asked only
whether a tunnel junction's numbers can put its maximum at the given peak.
"""
from dataclasses import dataclass
import difflib
import math
import re

import numpy as np

from siltandem.constants import STANDARD_TEMPERATURE_K
from siltandem.errors import StackError
from siltandem.text import excerpt


@dataclass(frozen=True)
class Parameter:
    """One key of an element table: its unit, range and default."""

    key: str
    unit: str
    low: float
    high: float
    default: float | None = None        # None: required
    low_open: bool = False              # strict lower bound
    high_open: bool = False
    help: str = ""

    def describe_range(self):
        left = "(" if self.low_open else "["
        right = ")" if self.high_open else "]"
        return f"{left}{self.low:g}, {self.high:g}{right} {self.unit}".strip()


INF = math.inf
#: smallest absorptance, ERE and shunt a subcell may give: sensible floors that keep the law's
#: numbers finite (a denormal 5e-324 would make J01 or the shunt conductance infinite)
MIN_ABSORPTANCE = 1e-6
MIN_ERE = 1e-12
MIN_SHUNT_OHM_CM2 = 1e-6

#: keys of each element kind: the stack-file schema (units as written in files)
ELEMENT_SCHEMA = {
    "subcell": [
        Parameter("gap_eV", "eV", 0.3, 4.0, help="band gap"),
        Parameter("absorptance", "", MIN_ABSORPTANCE, 1.0, 1.0,
                  help="step absorptance above the gap; below 1e-6 the subcell takes less than a "
                       "millionth of the light: leave it out of the stack instead"),
        Parameter("ere", "", MIN_ERE, 1.0, 1.0,
                  help="external radiative efficiency (1 = radiative limit); below 1e-12 J01 is "
                       "more than 1e12 times the radiative limit and the cell gives no voltage"),
        Parameter("j02_mA_cm2", "mA/cm2", 0.0, 1e3, 0.0,
                  help="saturation current of the ideality-2 diode"),
        Parameter("series_ohm_cm2", "ohm cm2", 0.0, 1e3, 0.0, help="series resistance"),
        Parameter("shunt_ohm_cm2", "ohm cm2", MIN_SHUNT_OHM_CM2, INF, INF,
                  help="shunt resistance (omit for none); below 1e-6 ohm cm2 it drops less than "
                       "a microvolt at 1 A/cm2: a short circuit, leave the subcell out instead"),
        Parameter("breakdown_V", "V", 0.0, 1e4, INF, low_open=True,
                  help="reverse breakdown voltage, as a positive magnitude (needs a shunt)"),
        Parameter("breakdown_factor", "", 0.0, 1e3, 1e-3,
                  help="fraction of the shunt current multiplied by avalanche"),
        Parameter("breakdown_exponent", "", 0.5, 20.0, 3.28, help="avalanche exponent"),
        Parameter("luminescent_coupling", "", 0.0, 1.0, 0.0,
                  help="fraction of this subcell's radiative emission that the next subcell "
                       "below collects as photocurrent (0 = none)"),
    ],
    "resistor": [
        Parameter("series_ohm_cm2", "ohm cm2", 0.0, 1e4, help="series resistance"),
    ],
    "tunnel": [
        Parameter("peak_mA_cm2", "mA/cm2", 0.0, 1e9, low_open=True,
                  help="peak tunnelling current density"),
        Parameter("peak_V", "V", 0.0, 5.0, low_open=True, help="voltage of the current peak"),
        Parameter("valley_mA_cm2", "mA/cm2", 0.0, 1e9, low_open=True,
                  help="excess (valley) current density"),
        Parameter("valley_V", "V", 0.0, 10.0, low_open=True, help="voltage of the valley"),
        Parameter("excess_slope_per_V", "1/V", 0.0, 1e4, 0.0,
                  help="exponent of the excess current (0: the law's default)"),
        Parameter("saturation_mA_cm2", "mA/cm2", 0.0, 1e3, 1e-14,
                  help="saturation current of the thermal diode beyond the valley"),
        Parameter("ideality", "", 0.5, 5.0, 1.0, help="ideality of the thermal diode"),
    ],
}
#: numeric keys of an isotype interface (each optional; which ones are needed depends on the form)
ISOTYPE_NUMBERS = {
    "barrier_eV": Parameter("barrier_eV", "eV", -1.0, 5.0,
                            help="barrier top above the accumulation side's Fermi level"),
    "built_in_V": Parameter("built_in_V", "V", 0.0, 5.0, low_open=True,
                            help="built-in potential"),
    "alpha": Parameter("alpha", "", 0.0, INF, low_open=True, high_open=True,
                       help="eps1 N1 / (eps2 N2), accumulation over depletion side"),
    "accumulation_doping_cm3": Parameter("accumulation_doping_cm3", "cm-3", 1e10, 1e22,
                                         help="doping of the accumulation side"),
    "depletion_doping_cm3": Parameter("depletion_doping_cm3", "cm-3", 1e10, 1e22,
                                      help="doping of the depletion side"),
    "accumulation_permittivity": Parameter("accumulation_permittivity", "", 1.0, 100.0,
                                           help="relative permittivity, accumulation side"),
    "depletion_permittivity": Parameter("depletion_permittivity", "", 1.0, 100.0,
                                        help="relative permittivity, depletion side"),
    "richardson_A_cm2_K2": Parameter("richardson_A_cm2_K2", "A cm-2 K-2", 0.0, 1e4,
                                     low_open=True, help="effective Richardson constant"),
    "upper_doping_cm3": Parameter("upper_doping_cm3", "cm-3", 1e10, 1e22,
                                  help="doping of the sun-side layer"),
    "lower_doping_cm3": Parameter("lower_doping_cm3", "cm-3", 1e10, 1e22,
                                  help="doping of the layer below"),
    "upper_composition": Parameter("upper_composition", "", 0.0, 1.0,
                                   help="alloy composition of the sun-side layer"),
    "lower_composition": Parameter("lower_composition", "", 0.0, 1.0,
                                   help="alloy composition of the layer below"),
    "offset_eV": Parameter("offset_eV", "eV", -3.0, 3.0,
                           help="band offset override (step of the carrier's band edge from "
                                "the upper to the lower layer)"),
    "sheet_charge_cm2": Parameter("sheet_charge_cm2", "cm-2", -1e15, 1e15,
                                  help="fixed interface charge in elementary charges per cm^2 "
                                       "(> 0 positive; polar interfaces)"),
    "tunnelling_mass": Parameter("tunnelling_mass", "m0", 0.01, 10.0,
                                 help="tunnelling effective mass of the depletion side (numbers "
                                      "form with transport = \"thermionic-field\")"),
}
#: text keys of an isotype interface and their allowed values (None: any text)
ISOTYPE_TEXTS = {"carrier": ("electron", "hole"), "orientation": ("forward", "reverse"),
                 "carriers_flow": ("down", "up"), "upper_material": None,
                 "lower_material": None,
                 "transport": ("thermionic", "thermionic-field"),
                 "statistics": ("fermi-dirac", "boltzmann")}
COMMON_ELEMENT_KEYS = {"kind", "name", "string"}
STACK_KEYS = {"name", "notes"}
CONDITION_KEYS = {"spectrum": "am1.5g", "suns": 1.0, "temperature_K": STANDARD_TEMPERATURE_K,
                  "terminals": 2}
TOP_LEVEL_KEYS = {"stack", "conditions", "element", "layer", "coating", "rules", "optics",
                  "placement", "device", "materials"}
#: the numeric keys of [conditions] with their ranges; the overrides --suns and --temperature and
#: the API's suns= and temperature_K= are checked against these same entries (siltandem.options)
CONDITION_SCHEMA = {
    "suns": Parameter("suns", "suns", 0.0, 1e5, 1.0, low_open=True, help="concentration"),
    "temperature_K": Parameter("temperature_K", "K", 150.0, 1000.0, STANDARD_TEMPERATURE_K,
                               help="cell temperature"),
}


def suggest(word, options):
    close = difflib.get_close_matches(word, sorted(options), n=3, cutoff=0.6)
    return f"did you mean {' or '.join(repr(c) for c in close)}? " if close else ""


def read_number(value, *, file, where, key, unit):
    """A file value as a float: a number (TOML integer or float), not text, bool or nan.

    A TOML integer may have any number of digits; one beyond float64 (about 1.8e308) is
    refused here rather than overflowing later.
    """
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise StackError(f"key {key!r} must be a number ({unit or 'no unit'}), got "
                         f"{type(value).__name__} {excerpt(value)}", file=file, where=where,
                         fix=f"write {key} = <number> without quotes")
    try:
        value = float(value)
    except OverflowError:
        raise StackError(f"key {key!r} = {excerpt(value)} is too large to be a number "
                         "(float64 holds magnitudes up to about 1.8e308)", file=file,
                         where=where, fix=f"give {key}" + (f" in {unit}" if unit else "")
                         + " within its range (README, stack files)") from None
    if math.isnan(value):
        raise StackError(f"key {key!r} is nan", file=file, where=where, fix="give a number")
    return value


def check_range(spec, value, *, file, where):
    low_bad = value <= spec.low if spec.low_open else value < spec.low
    high_bad = value >= spec.high if spec.high_open else value > spec.high
    if low_bad or high_bad:
        raise StackError(f"{spec.key} = {value:g} is outside its physical range "
                         f"{spec.describe_range()} ({spec.help})", file=file, where=where,
                         fix=f"give {spec.key} within {spec.describe_range()}")


def check_number(spec, value, *, file=None, where=None):
    """One value against its :class:`Parameter`: a number, not NaN, inside the key's range.

    The one check behind file keys, command-line overrides and study options (siltandem.options),
    so all three give the same message. Returns the value as a float.
    """
    if hasattr(value, "dtype") and getattr(value, "shape", None) == ():   # a numpy scalar
        value = value.item()
    value = read_number(value, file=file, where=where, key=spec.key, unit=spec.unit)
    check_range(spec, value, file=file, where=where)
    return value


def check_element_values(kind, values, *, file=None, where=None):
    """The rules between an element's keys: a tunnel junction's peak before and above its valley
    (and a law that can put its maximum there), a subcell's breakdown only with a shunt.

    ``values`` maps key -> number, or arrays of one design per entry (a study's grid): then any
    bad design raises (its message names the first one only through its numbers when the arrays
    hold one value; callers that need the design narrow the arrays down first).
    """
    if kind == "tunnel":
        check_tunnel(values, file=file, where=where)
    elif kind == "subcell":
        breakdown = np.isfinite(np.asarray(values["breakdown_V"], dtype=float))
        shunt = np.isfinite(np.asarray(values["shunt_ohm_cm2"], dtype=float))
        if np.any(breakdown & ~shunt):
            raise StackError("breakdown_V needs shunt_ohm_cm2: the avalanche current multiplies "
                             "the shunt current (J. W. Bishop, Solar Cells 25 (1988) 73)",
                             file=file, where=where,
                             fix="add shunt_ohm_cm2 = <ohm cm2>, or remove breakdown_V")


def check_tunnel(values, *, file, where):
    """Peak before valley, valley below peak, and a law that can put its maximum at the peak."""
    from siltandem.laws import esaki

    def g(key):   # one value as written; a study's arrays (any entry bad) say "several"
        value = np.asarray(values[key], dtype=float)
        return f"{float(value.reshape(-1)[0]):g}" if value.size == 1 else "(several values)"

    if np.any(np.asarray(values["peak_V"]) >= np.asarray(values["valley_V"])):
        raise StackError(f"peak_V = {g('peak_V')} V is not below valley_V = "
                         f"{g('valley_V')} V", file=file, where=where,
                         fix="the current peak comes before the valley: lower peak_V or raise "
                             "valley_V")
    if np.any(np.asarray(values["valley_mA_cm2"]) >= np.asarray(values["peak_mA_cm2"])):
        raise StackError(f"valley_mA_cm2 = {g('valley_mA_cm2')} is not below peak_mA_cm2 "
                         f"= {g('peak_mA_cm2')}", file=file, where=where,
                         fix="a tunnel junction's valley current is below its peak current: "
                             "lower valley_mA_cm2 or raise peak_mA_cm2")
    slope = np.asarray(values["excess_slope_per_V"], dtype=float)
    slope = slope if np.all(slope > 0) else None     # 0: the law's default (as compile.py)
    try:
        esaki.tunnel_term_for_exact_peak(
            peak_A_m2=values["peak_mA_cm2"] * 10, peak_V=values["peak_V"],
            valley_A_m2=values["valley_mA_cm2"] * 10, valley_V=values["valley_V"],
            excess_slope_per_V=slope, saturation_A_m2=values["saturation_mA_cm2"] * 10,
            ideality=values["ideality"], temperature_K=STANDARD_TEMPERATURE_K)
    except esaki.TunnelParameterError as exc:
        message = str(exc).removeprefix("tunnel junction: ")
        message = re.sub(r"(-?[\d.]+(?:e[-+]?\d+)?) A/m\^2",
                         lambda m: f"{float(m.group(1)) / 10:g} mA/cm2", message)
        for law_key, file_key in (("peak_A_m2", "peak_mA_cm2"), ("valley_A_m2", "valley_mA_cm2"),
                                  ("saturation_A_m2", "saturation_mA_cm2")):
            message = message.replace(law_key, file_key)
        problem, _, fix = message.partition(": ")
        raise StackError(problem, file=file, where=where,
                         fix=fix or "check peak, valley and saturation values") from None
