"""Slope bounds of a series string between two samples of its trace, for the MPP certificate.

Over a cell of the pilot coordinate each element's dV/dJ lies in a range given by its law's slope
range (laws: diode, esaki, thermionic; the compiled forms in laws/compiled.py); their sum, with the
pilot's own law, bounds dJ/dt and dV/dt, and so the power between the samples (certificate.py).
Interval products follow R. E. Moore, R. B. Kearfott, M. J. Cloud, Introduction to Interval
Analysis, SIAM 2009, ch. 2."""
import numpy as np
from siltandem.constants import thermal_voltage_V
from siltandem.laws import compiled as kernels

#: the rows of a segment's sample array (certificate.Segment.data): t, J, V, P, dP/dt, known,
#: then one row per element voltage
_T, _J, _V, _P, _SLOPE, _KNOWN, _PARTS = SEGMENT_ROWS = range(7)


def product_range(a_lo, a_hi, b_lo, b_hi):
    """Range of a*b over two intervals (the four corners); a NaN corner counts as unbounded."""
    with np.errstate(invalid="ignore", over="ignore"):
        c1, c2, c3, c4 = a_lo * b_lo, a_lo * b_hi, a_hi * b_lo, a_hi * b_hi
        low = np.minimum(np.minimum(c1, c2), np.minimum(c3, c4))
        high = np.maximum(np.maximum(c1, c2), np.maximum(c3, c4))
    unknown = np.isnan(low)
    return np.where(unknown, -np.inf, low), np.where(unknown, np.inf, high)


def _laws(string):
    """The string's elements grouped for the slope ranges, with their compiled law parameters
    stacked per kind (built once per string and temperature)."""
    cache = string.__dict__.setdefault("_slope_laws", {})
    key = id(string.temperature_K) if np.ndim(string.temperature_K) else \
        float(string.temperature_K)
    if key not in cache:
        size, temperature = string.size, string.temperature_K
        kinds = {kind: [k for k, e in enumerate(string.elements) if e.kind == kind]
                 for kind in ("subcell", "tunnel", "isotype", "resistor")}

        def stacked(rows):
            return np.stack([np.broadcast_to(r, (size, r.shape[1])) for r in rows])

        subcells = [string.elements[k] for k in kinds["subcell"]]
        cache[key] = dict(
            kinds=kinds,
            subcell_params=stacked([c._law_parameters(temperature) for c in subcells]),
            subcell_series=stacked([np.asarray(c.series_ohm_m2, dtype=float).reshape(-1, 1)
                                    for c in subcells]),
            tunnel_params=(stacked([string.elements[k]._law_parameters(temperature)
                                    for k in kinds["tunnel"]]) if kinds["tunnel"] else None),
            resistance=sum((np.broadcast_to(string.elements[k].series_ohm_m2, (size, 1))
                            for k in kinds["resistor"]), np.zeros((size, 1))),
            pilot=(np.arange(len(subcells))[:, None, None]
                   == string.pilot_index[None, :, :]))
    return cache[key]


def _law_slopes(code, params, lo, hi, needed=None):
    """kernels.slope_range over stacked laws: params (L, B, P), intervals (L, B, K).
    ``needed`` (L, B, K) bool: only those entries are evaluated (each entry's range is its own:
    the same numbers), the others are NaN."""
    laws, size, width = lo.shape
    params = np.broadcast_to(params, (laws, size, params.shape[2]))
    if needed is None:
        low, high = kernels.slope_range(
            code, kernels.as_input(params.reshape(laws * size, -1)),
            kernels.as_input(lo.reshape(laws * size, width)),
            kernels.as_input(hi.reshape(laws * size, width)))
        return low.reshape(lo.shape), high.reshape(lo.shape)
    law, row, cell = np.nonzero(needed)
    low, high = np.full(lo.shape, np.nan), np.full(lo.shape, np.nan)
    if law.size:
        # one entry per parameter row (kernels.slope_range takes rows (R, P), intervals (R, 1))
        some_low, some_high = kernels.slope_range(
            code, kernels.as_input(params[law, row]),
            kernels.as_input(lo[law, row, cell][:, None]),
            kernels.as_input(hi[law, row, cell][:, None]))
        low[law, row, cell], high[law, row, cell] = some_low[:, 0], some_high[:, 0]
    return low, high


def _reciprocal(low, high):
    """[1/high, 1/low] for a slope range of one sign; (-inf, inf) where it holds zero or is not
    finite."""
    with np.errstate(divide="ignore", invalid="ignore"):
        ok = np.isfinite(low) & np.isfinite(high) & ((low > 0) | (high < 0))
        return np.where(ok, 1.0 / high, -np.inf), np.where(ok, 1.0 / low, np.inf)


def _coupled_slopes(string, vj_high, steep, flat, count, by_current):
    """The subcells' dJ/dVj ranges (steep, flat: (L, B, K), L = count or 2 count with the
    pilot's range over t after them) as seen from the string current, with luminescent
    coupling (circuit/coupling.py): a coupled subcell's junction follows J - ΔJ(J), so its
    dVj/dJ is the law's times (1 - dΔJ/dJ), in [1, 1 + m], and a coupled pilot's dJ/dt the
    law's divided by it. m bounds |dΔJ/dJ| = c J0,rad/Vt exp(Vj,s/Vt) |dVj,s/dJ| over the cell
    from the source s's highest junction voltage and its flattest slope (already divided by
    its own 1 + m in a chain). Dividing the flat end of dJ/dVj (<= 0) by 1 + m gives both."""
    subcells = string.subcells
    temperature = string.temperature_K
    vt = thermal_voltage_V(np.asarray(temperature, dtype=float))
    steep, flat = steep.copy(), flat.copy()
    for i, cell in enumerate(subcells):
        if not getattr(cell, "source", None) or not any(cell.source is s for s in subcells):
            continue
        s = next(k for k, c in enumerate(subcells) if c is cell.source)
        with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
            factor = cell.emission_slope_factor(temperature)
            m = factor * np.exp(vj_high[s] / vt) / np.abs(flat[s])
            m = np.where(factor == 0, 0.0, np.where(np.isnan(m), np.inf, m))
            flat[i] = flat[i] / (1.0 + m)
            if not by_current:
                flat[count + i] = flat[count + i] / (1.0 + m)
    return steep, flat


def _distinct(cells, real):
    """The cells to evaluate and which entries to evaluate: ``cells`` (B, K) as
    certificate._compact pads them (a row's padding repeats its first cell), ``real`` (B, K)
    its real entries. Returns (cells, own): the padding points at the row's last real cell
    instead (an isotype interface's kernel then reuses that cell's ends: laws/compiled_isotype.py
    isotype_slope_ranges), and ``own`` marks the entries whose answers are their own (the real
    ones, and a row's first entry, which is evaluated even in a row with none real); every
    other entry's answer is its row's first entry's (the cell it repeats)."""
    own = real.copy()
    own[:, 0] = True
    last = np.maximum(real.sum(axis=1), 1)[:, None] - 1
    return np.where(own, cells, np.take_along_axis(cells, last, axis=1)), own


def slope_bounds(string, segment, cells, real=None):
    """The slope (mean value) bound of P over the cells ``cells`` (B, K) of a segment (indices
    of their left ends), and the width of the dP/dt range per unit of t there (B, K): inf
    where some slope range is unbounded.

    ``real`` (B, K), optional: the entries that are cells of their own (certificate._compact:
    the rest repeat the row's first cell). Then only those laws' slope ranges are evaluated that
    the bound reads (the pilot's range over t, the other subcells' over their junction
    voltages, the pilot's junction range only where it sends light to a coupled subcell), and
    each repeated entry takes its row's first answer: the same numbers as evaluating all."""
    own = None
    if real is not None:
        cells, own = _distinct(cells, real)
    bound, width = _slope_bounds(string, segment, cells, own)
    if own is not None:
        bound = np.where(own, bound, bound[:, :1])
        width = np.where(own, width, width[:, :1])
    return bound, width


def _needed_subcell_ranges(string, laws, own, count, by_current):
    """(L, B, K) bool: the subcell law slope ranges :func:`_slope_bounds` reads, of the entries
    ``own`` (B, K); L = count, or 2 count with the ranges over t after the junction ranges."""
    if by_current:
        return np.broadcast_to(own, (count,) + own.shape)
    pilot = laws["pilot"]                                            # (count, B, 1)
    sources = np.array([any(getattr(c, "source", None) is s for c in string.subcells)
                        for s in string.subcells])[:, None, None]
    junction = (~pilot | sources) & own
    return np.concatenate([junction, pilot & own])


def _slope_bounds(string, segment, cells, own):
    """:func:`slope_bounds` on the padded cells; ``own`` (B, K) or None: the entries whose
    answers are read (NaN-valued law ranges elsewhere)."""
    rows = np.arange(cells.shape[0])[:, None]
    a, b = segment.data[:, rows, cells], segment.data[:, rows, cells + 1]
    t_a, t_b, j_a, j_b, p_a, p_b = a[_T], b[_T], a[_J], b[_J], a[_P], b[_P]
    parts_a, parts_b = a[_PARTS:], b[_PARTS:]
    j_lo, j_hi = np.minimum(j_a, j_b), np.maximum(j_a, j_b)
    laws = _laws(string)
    kinds = laws["kinds"]
    by_current = segment.by_current
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        v_lo = np.minimum(parts_a, parts_b).sum(axis=0)
        v_hi = np.maximum(parts_a, parts_b).sum(axis=0)
        # subcells: dJ/dVj over their junction voltages (and the pilot's over t), one call
        series = laws["subcell_series"]
        va, vb = parts_a[kinds["subcell"]] + j_a * series, parts_b[kinds["subcell"]] + j_b * series
        count = len(kinds["subcell"])
        lows, highs = [np.minimum(va, vb)], [np.maximum(va, vb)]
        if not by_current:
            lows.append(np.broadcast_to(t_a, va.shape))
            highs.append(np.broadcast_to(t_b, va.shape))
        params = laws["subcell_params"]
        needed = None if own is None else _needed_subcell_ranges(string, laws, own, count,
                                                                 by_current)
        steep, flat = _law_slopes(kernels.SUBCELL_LAW,
                                  np.concatenate([params] * len(lows)) if len(lows) > 1
                                  else params, np.concatenate(lows), np.concatenate(highs),
                                  needed)
        if string.coupled:
            steep, flat = _coupled_slopes(string, np.concatenate(highs)[:count], steep, flat,
                                          count, by_current)
        lo, hi = _reciprocal(steep[:count], flat[:count])
        lo, hi = lo - series, hi - series
        if not by_current:
            # the pilot enters through its series resistance only (its junction is t); its
            # own law's slope is dJ/dt
            pilot = laws["pilot"]
            lo, hi = np.where(pilot, -series, lo), np.where(pilot, -series, hi)
            d_lo = np.where(pilot, steep[count:], 0.0).sum(axis=0)
            d_hi = np.where(pilot, flat[count:], 0.0).sum(axis=0)
        s_lo, s_hi = lo.sum(axis=0), hi.sum(axis=0)
        if kinds["tunnel"]:
            ua, ub = -parts_a[kinds["tunnel"]], -parts_b[kinds["tunnel"]]
            low, high = _law_slopes(kernels.TUNNEL_LAW, laws["tunnel_params"],
                                    np.minimum(ua, ub), np.maximum(ua, ub),
                                    None if own is None else
                                    np.broadcast_to(own, ua.shape))
            lo, hi = _reciprocal(low, high)
            s_lo, s_hi = s_lo - hi.sum(axis=0), s_hi - lo.sum(axis=0)
        for k in kinds["isotype"]:
            lo, hi = string.elements[k].voltage_slope_range(parts_a[k], parts_b[k], j_a, j_b,
                                                            string.temperature_K)
            s_lo, s_hi = s_lo + lo, s_hi + hi
        s_lo, s_hi = s_lo - laws["resistance"], s_hi - laws["resistance"]
        js_lo, js_hi = product_range(j_lo, j_hi, s_lo, s_hi)
        w_lo, w_hi = v_lo + js_lo, v_hi + js_hi
        if by_current:
            # dP/dJ = V + J S, S the sum of every element's dV/dJ (the pilot's too)
            rise_lo, rise_hi = w_lo, w_hi
        else:
            # dP/dt = J + J' (V + J S)
            dw_lo, dw_hi = product_range(d_lo, d_hi, w_lo, w_hi)
            rise_lo, rise_hi = j_lo + dw_lo, j_hi + dw_hi
        h = t_b - t_a
        meet = np.clip((p_b - p_a - rise_lo * h) / (rise_hi - rise_lo), 0.0, h)
        bound = np.where(rise_lo >= 0, p_b, np.where(rise_hi <= 0, p_a, p_a + rise_hi * meet))
        width = (rise_hi - rise_lo) / h
    ok = np.isfinite(bound) & np.isfinite(p_a) & np.isfinite(p_b)
    return np.where(ok, np.maximum(bound, np.maximum(p_a, p_b)), np.inf), \
        np.where(np.isfinite(width), width, np.inf)
