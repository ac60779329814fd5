"""Plain-text summary of a Result, for the terminal."""


def _fmt(value, spec, missing="-"):
    return missing if value is None else format(value, spec)


def _table(headers, rows, aligns):
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
    c = s["conditions"]
    lines = [f"siltandem — {s['stack']}"]
    if s.get("source_file"):
        lines.append(f"  file: {s['source_file']}")
    lines.append(f"  light: {c['spectrum']} ({c['spectrum_description']}), {c['suns']:g} sun(s), "
                 f"{c['irradiance_W_m2']:.1f} W/m2; cell at {c['temperature_K']:.2f} K; "
                 f"{c['terminals']} terminals")
    lines.append("")
    lines.append(f"  efficiency        {s['efficiency_pct']:8.3f} %")
    if len(s["strings"]) == 1:
        lines += [
            f"  Voc               {_fmt(s['voc_V'], '8.4f')} V",
            f"  Jsc               {_fmt(s['jsc_mA_cm2'], '8.3f')} mA/cm2",
            f"  fill factor       {_fmt(s['fill_factor'] and 100 * s['fill_factor'], '8.2f')} %",
            f"  MPP voltage       {_fmt(s['mpp_V'], '8.4f')} V",
            f"  MPP current       {_fmt(s['mpp_mA_cm2'], '8.3f')} mA/cm2",
        ]
    else:
        rows = [[str(r["string"]), _fmt(r["efficiency_pct"], ".3f"), _fmt(r["voc_V"], ".4f"),
                 _fmt(r["jsc_mA_cm2"], ".3f"), _fmt(r["fill_factor"] and 100 * r["fill_factor"],
                                                     ".2f"),
                 _fmt(r["mpp_V"], ".4f"), _fmt(r["mpp_mA_cm2"], ".3f")]
                for r in s["strings"]]
        lines.append("  each string at its own MPP, powers summed:")
        lines += ["    " + x for x in _table(
            ["string", "efficiency %", "Voc V", "Jsc mA/cm2", "FF %", "MPP V", "MPP mA/cm2"],
            rows, "<>>>>>>")]
    lines.append("")
    lines.append("  subcells (optical order, sun side first; * limits its string's current)")
    rows = [[("* " if r["limiting"] else "  ") + r["name"], str(r["string"]),
             f"{r['gap_eV']:.3f}", f"{r['photocurrent_mA_cm2']:.3f}",
             f"{r['voc_alone_V']:.4f}", f"{r['efficiency_alone_pct']:.2f}"]
            for r in s["subcells"]]
    lines += ["    " + x for x in _table(
        ["subcell", "string", "gap eV", "photocurrent mA/cm2", "Voc alone V", "eff. alone %"],
        rows, "<>>>>>")]
    lines.append("")
    lines.append("  elements at the MPP (current order; loss = power given up, "
                 "for a subcell against its own MPP)")
    rows = [[r["name"], r["kind"], str(r["string"]), f"{r['voltage_at_mpp_V']:+.4f}",
             f"{r['power_W_m2']:+.3f}", f"{r['loss_W_m2']:.3f}", f"{r['loss_pct_abs']:.3f}"]
            for r in s["elements"]]
    lines += ["    " + x for x in _table(
        ["element", "kind", "string", "voltage V", "power W/m2", "loss W/m2", "loss % abs"],
        rows, "<<>>>>>")]
    lines.append("")
    lines.append(f"  power balance error {s['power_balance_error_W_m2']:.2e} W/m2 "
                 "(sum of element powers, each from its own law, against V*J)")
    for w in s["warnings"]:
        lines.append(f"  warning: {w}")
    for caution in s["cautions"]:
        lines.append(f"  caution: {caution}")
    return "\n".join(lines) + "\n"
