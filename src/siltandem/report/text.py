"""Plain-text summary of a Result, for the terminal.

A number with no value (None, NaN, inf) prints as ``none`` (its reason is in a warning), a
key that does not apply as ``-``; names and every line pass through ``text.printable``.
"""
from siltandem.text import MISSING, number, printable


def _fmt(value, spec, missing=MISSING):
    return number(value, spec, missing)


def _lines(lines):
    """The report's lines joined, with control characters in names escaped."""
    return printable("\n".join(lines), keep_newlines=True) + "\n"


def _headline(label, value, spec, unit):
    """``  Voc                 2.0737 V``; ``none`` without a unit where there is no value."""
    text = _fmt(value, spec)
    return f"  {label:<17} {text:>8}" + ("" if text == MISSING else f" {unit}")


def _finite(value):
    return number(value, "g", "") != ""


def _milli(value):
    return None if value is None else 1000 * value


def _table(headers, rows, aligns):
    rows = [[printable(c) for c in r] for r in rows]
    widths = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h)
              for i, h in enumerate(headers)]

    def line(cells):
        return "  ".join(c.rjust(w) if a == ">" else c.ljust(w)
                         for c, w, a in zip(cells, widths, aligns)).rstrip()

    out = [line(headers), line(["-" * w for w in widths])]
    out += [line(r) for r in rows]
    return out


def text_summary(result):
    """A readable multi-line summary: headline numbers, subcells, elements, warnings, cautions."""
    s = result.summary
    lines = _title(s)
    lines += _headline_numbers(s)
    lines += _proof_notes(s)
    lines += _regime_line(s)
    lines += _subcell_table(s)
    lines += _element_table(s)
    lines += _interface_table(s)
    lines += _tunnel_table(s)
    lines += _closing(s)
    return _lines(lines)


def _title(s):
    """The stack's name, its file and the light and temperature it was solved under."""
    c = s["conditions"]
    lines = [f"siltandem — {s['stack']}"]
    if s.get("source_file"):
        lines.append(f"  file: {s['source_file']}")
    lines.append(f"  light: {c['spectrum']} ({c['spectrum_description']}), {c['suns']:g} sun(s), "
                 f"{c['irradiance_W_m2']:.1f} W/m2; cell at {c['temperature_K']:.2f} K; "
                 f"{c['terminals']} terminals")
    lines.append("")
    return lines


def _headline_numbers(s):
    """Efficiency, then Voc, Jsc, fill factor and MPP of one string, or a table of the strings."""
    lines = [_headline("efficiency", s["efficiency_pct"], ".3f", "%")]
    if len(s["strings"]) == 1:
        return lines + [
            _headline("Voc", s["voc_V"], ".4f", "V"),
            _headline("Jsc", s["jsc_mA_cm2"], ".3f", "mA/cm2"),
            _headline("fill factor", s["fill_factor_pct"], ".2f", "%"),
            _headline("MPP voltage", s["mpp_V"], ".4f", "V"),
            _headline("MPP current", s["mpp_mA_cm2"], ".3f", "mA/cm2"),
        ]
    rows = [[str(r["string"]), _fmt(r["efficiency_pct"], ".3f"), _fmt(r["voc_V"], ".4f"),
             _fmt(r["jsc_mA_cm2"], ".3f"), _fmt(r["fill_factor_pct"], ".2f"),
             _fmt(r["mpp_V"], ".4f"), _fmt(r["mpp_mA_cm2"], ".3f")]
            for r in s["strings"]]
    lines.append("  each string at its own MPP, powers summed:")
    lines += ["    " + x for x in _table(
        ["string", "efficiency %", "Voc V", "Jsc mA/cm2", "FF %", "MPP V", "MPP mA/cm2"],
        rows, "<>>>>>>")]
    return lines


def _proof_notes(s):
    """A line for every string whose MPP was found but not proven global."""
    lines = []
    for r in s["strings"]:
        proof = r.get("mpp_certificate")
        found = _finite(r["mpp_W_m2"])
        if proof is not None and found and not proof["certified"]:
            bound = proof["upper_bound_W_m2"]
            which = f"string {r['string']}: " if len(s["strings"]) > 1 else ""
            lines.append(f"  {which}MPP not proven global"
                         + (f": the curve may reach {bound:.6g} W/m2 between its evaluated "
                            "points" if _finite(bound) else ""))
    return lines


def _regime_line(s):
    """Where the tunnel junctions operate on the traced curve (none without a junction)."""
    regime = s.get("regime")
    if regime and regime != "no tunnel junction":
        regimes = regime if isinstance(regime, list) else [regime]
        return [f"  tunnel junctions  {', '.join(regimes)}"]
    return []


def _subcell_table(s):
    """The subcells in optical order; * marks the one limiting its string's current."""
    lines = ["", "  subcells (optical order, sun side first; * limits its string's current)"]
    rows = [[("* " if r["limiting"] else "  ") + r["name"], str(r["string"]),
             _fmt(r['gap_eV'], ".3f"), _fmt(r['photocurrent_mA_cm2'], ".3f"),
             _fmt(r['voc_alone_V'], ".4f"), _fmt(r['efficiency_alone_pct'], ".2f")]
            for r in s["subcells"]]
    lines += ["    " + x for x in _table(
        ["subcell", "string", "gap eV", "photocurrent mA/cm2", "Voc alone V", "eff. alone %"],
        rows, "<>>>>>")]
    coupled = [r for r in s["subcells"] if r.get("coupled_mA_cm2")]
    if coupled:
        lines += ["    luminescent coupling at the MPP (light from the subcell above, collected): "
                  + ", ".join(f"{r['name']} +{_fmt(r['coupled_mA_cm2'], '.3f')} mA/cm2"
                              for r in coupled)]
    return lines


def _element_table(s):
    """Every element at the MPP in current order: voltage, power, loss and efficiency penalty."""
    lines = ["", "  elements at the MPP (current order; loss = power given up, "
                 "for a subcell against its own MPP)"]
    rows = [[r["name"], r["kind"], str(r["string"]), _fmt(r['voltage_at_mpp_V'], "+.4f"),
             _fmt(r['power_W_m2'], "+.3f"), _fmt(r['loss_W_m2'], ".3f"),
             _fmt(r['loss_pct_abs'], ".3f"),
             "-" if "efficiency_penalty_pct_abs" not in r
             else _fmt(r["efficiency_penalty_pct_abs"], ".3f")]
            for r in s["elements"]]
    lines += ["    " + x for x in _table(
        ["element", "kind", "string", "voltage V", "power W/m2", "loss W/m2", "loss % abs",
         "penalty % abs"], rows, "<<>>>>>>")]
    lines.append("    (penalty: efficiency gained if the element were removed and the string "
                 "solved again)")
    return lines


def _interface_table(s):
    """The isotype interfaces (if any); ! marks one that blocks."""
    if not s.get("interfaces"):
        return []
    field = [r["name"] for r in s["interfaces"] if r.get("transport") == "thermionic-field"]
    law = ("thermionic emission" if not field else "thermionic-field emission" if len(field) == len(
        s["interfaces"]) else "thermionic emission, with tunnelling at " + ", ".join(field))
    lines = ["", f"  isotype interfaces ({law}; ! blocks: drop above 100 mV or "
                 "penalty above 1 %)"]
    rows = [[("! " if r["blocking"] else "  ") + r["name"], r["carrier"],
             _fmt(r['barrier_eV'], ".3f"), _fmt(r['offset_eV'], ".3f", "-"),
             _fmt(r['alpha'], ".3g"), r["bias"], _fmt(_milli(r['drop_at_mpp_V']), ".1f"),
             _fmt(r['loss_W_m2'], ".3f"), _fmt(r['efficiency_penalty_pct_abs'], ".3f")]
            for r in s["interfaces"]]
    lines += ["    " + x for x in _table(
        ["interface", "carrier", "barrier eV", "offset eV", "alpha", "bias",
         "drop at MPP mV", "loss W/m2", "penalty % abs"], rows, "<<>>><>>>")]
    if any(not _finite(r["offset_eV"]) for r in s["interfaces"]):
        lines.append("    (offset -: an interface given by its law's numbers has no band "
                     "offset; give it by its two materials for one)")
    return lines


def _tunnel_table(s):
    """The tunnel junctions (if any): attained peak and valley, and the branch at the MPP."""
    if not s.get("tunnel_junctions"):
        return []
    lines = ["", "  tunnel junctions (attained peak and valley of the combined law)"]
    rows = [[r["name"], str(r["string"]), _fmt(r['peak_mA_cm2'], ".4g"),
             _fmt(r['peak_V'], ".3f"), _fmt(r['valley_mA_cm2'], ".4g"),
             _fmt(r['valley_V'], ".3f"), _fmt(r['peak_over_largest_photocurrent'], ".3g"),
             r["branch_at_mpp"]]
            for r in s["tunnel_junctions"]]
    lines += ["    " + x for x in _table(
        ["junction", "string", "peak mA/cm2", "peak V", "valley mA/cm2", "valley V",
         "peak / Jph", "branch at MPP"], rows, "<>>>>>><")]
    return lines


def _closing(s):
    """The power balance, then every warning and every caution."""
    lines = ["", f"  power balance error {_fmt(s['power_balance_error_W_m2'], '.2e')} W/m2 "
                 "(sum of element powers, each from its own law, against V*J)"]
    lines += [f"  warning: {w}" for w in s["warnings"]]
    lines += [f"  caution: {caution}" for caution in s["cautions"]]
    return lines


def sweep_summary(frame, direction, result):
    """What a voltage sweep shows: its best point on the sweep grid, against the true MPP."""
    import numpy as np

    power = frame["voltage_V"] * frame["current_mA_cm2"] * 10
    best = int(np.nanargmax(power.to_numpy())) if np.any(np.isfinite(power)) else None
    lines = [f"  voltage sweep {direction} ({len(frame)} points from "
             f"{_fmt(frame['voltage_V'].min(), '.3f')} to {_fmt(frame['voltage_V'].max(), '.3f')}"
             " V):"]
    if best is None:
        lines.append("    no point found")
    else:
        irradiance = result.summary["conditions"]["irradiance_W_m2"]
        lines.append(f"    best sweep point {frame['voltage_V'].iloc[best]:.4f} V, "
                     f"{frame['current_mA_cm2'].iloc[best]:.3f} mA/cm2, "
                     f"{100 * power.iloc[best] / irradiance:.3f} % (read on the sweep grid; the "
                     f"curve's true MPP above is {_fmt(result.summary['efficiency_pct'], '.3f')}"
                     " %)")
    return _lines(lines)


def concentration_summary(series, stack):
    """Table of efficiency against concentration, with where each junction's peak is exceeded."""
    flags = [c for c in series.columns if c.endswith(".peak_exceeded")]
    lines = [f"siltandem — {stack.name}: efficiency against concentration", ""]
    headers = ["suns", "efficiency %", "Voc V", "Jsc mA/cm2", "FF %", "regime"] + [
        f"{c.removesuffix('.peak_exceeded')} past peak" for c in flags]
    rows = []
    for _, r in series.iterrows():
        rows.append([f"{r['suns']:.4g}", _fmt(r["efficiency_pct"], ".3f"), _fmt(r["voc_V"], ".4f"),
                     _fmt(r["jsc_mA_cm2"], ".4g"), _fmt(r["fill_factor_pct"], ".2f"),
                     str(r["regime"])] + ["yes" if r[c] else "no" for c in flags])
    lines += ["  " + x for x in _table(headers, rows, ">>>>><" + "<" * len(flags))]
    lines.append("")
    if series["efficiency_pct"].notna().any():
        best = series["efficiency_pct"].idxmax()
        lines.append(f"  best: {series['efficiency_pct'][best]:.3f} % at "
                     f"{series['suns'][best]:.4g} suns")
    else:
        lines.append("  best: none (no concentration found an operating point)")
    for c in flags:
        exceeded = series[c].to_numpy(dtype=bool)
        if exceeded.any():
            lines.append(f"  {c.removesuffix('.peak_exceeded')}: peak current below the "
                         f"photocurrent from {series['suns'][exceeded.argmax()]:.4g} suns on")
    lines.append("  caution: concentrated light burns skin and eyes and ignites material; results "
                 "are models; follow local codes and licensed practice.")
    return _lines(lines)
