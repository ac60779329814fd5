"""The series solve: the light I-V of each string of elements, its MPP, Voc, Jsc and fill factor.

Every element of a string carries the same current J; the string's voltage is the sum of the
element voltages. Sign convention: generated current positive, so the power quadrant is J > 0,
V > 0.

How the curve is parameterised
------------------------------
A subcell's voltage as a function of current, V(J) = Vt ln1p((Jph - J)/J0), cannot reach its
reverse-biased branch in float64 when J0/Jph is below machine epsilon: J - Jph is lost to
rounding before the logarithm sees it. The string is therefore traced along the junction voltage
``t`` of one *pilot* subcell, the one with the smallest photocurrent (per design in a batch):
J = J_pilot(t) is computed forward (no cancellation), and every other element gives its voltage
at that current. The terminal voltage rises strictly with t, so the whole curve, from forward
bias beyond Voc down to reverse bias of the pilot, is single-valued in t. MPP, Voc and Jsc are
roots on that curve (not grid readings): Voc exactly at J = 0, Jsc as the root of V(t) = 0, and
the MPP as the root of dP/dt = 0 bracketed by the best point of a coarse grid.

Everything is batched: element parameters are (B, 1) arrays and the solve works on (B, N) grids.
"""
from dataclasses import dataclass, field
import functools
import warnings

import numpy as np

from siltandem.solve.explicit import solve_explicit
from siltandem.solve.path import solve_on_path
from siltandem.solve.string import SeriesString, open_circuit_voltages


@dataclass(frozen=True)
class StringSolution:
    """Solution of B designs of one series string (arrays of shape (B,)).

    Attributes
    ----------
    element_names : list of str
        In current order (front terminal to back terminal).
    voc_V, jsc_A_m2, mpp_V, mpp_A_m2, mpp_W_m2, fill_factor : ndarray
    voltage_at_mpp_V : dict
        Element name -> its voltage at the MPP [V].
    voltage_at_zero_current_V : dict
        Element name -> its voltage at open circuit [V].
    power_balance_error_W_m2 : ndarray
        |sum_i V_i J_i(V_i) - V J| at the MPP, each J_i from the element's own forward law.
    failed : ndarray of bool
        Designs for which no answer was found (their numbers are NaN).
    curve : dict or None
        ``{"current_A_m2": (B, N), "voltage_V": (B, N), element name: (B, N)}`` when asked for,
        ordered from reverse bias to forward bias along the traced path.
    regime : ndarray of str
        "no tunnel junction", "below peak" (every junction on its tunnel branch), "past peak, no
        hysteresis" (the terminal curve is N-shaped: single-valued in V) or "past peak, hysteresis"
        (S-shaped: a voltage sweep jumps, differently up and down).
    tunnel_branch_at_mpp : dict
        Tunnel junction name -> branch ("tunnel", "negative", "thermal") it sits on at the MPP.
    mpp_certified : ndarray of bool
        The MPP is proven the global maximum of the traced curve (certificate.py): no point of
        it exceeds ``mpp_bound_W_m2``, which is within 1e-9 (relative) of ``mpp_W_m2``.
    mpp_bound_W_m2 : ndarray
        The largest upper bound of the power over the traced curve [W/m2] (>= mpp_W_m2).
    mpp_cells_checked : ndarray of int
        Cells (intervals between evaluated points) the proof bounded.
    """

    element_names: list
    voc_V: np.ndarray
    jsc_A_m2: np.ndarray
    mpp_V: np.ndarray
    mpp_A_m2: np.ndarray
    mpp_W_m2: np.ndarray
    fill_factor: np.ndarray
    voltage_at_mpp_V: dict
    voltage_at_zero_current_V: dict
    power_balance_error_W_m2: np.ndarray
    failed: np.ndarray
    pilot_index: np.ndarray
    curve: dict | None = field(default=None)
    regime: np.ndarray | None = None
    tunnel_branch_at_mpp: dict = field(default_factory=dict)
    capped: np.ndarray | None = None
    mpp_certified: np.ndarray | None = None
    mpp_bound_W_m2: np.ndarray | None = None
    mpp_cells_checked: np.ndarray | None = None
    #: subcell name -> photocurrent [A/m^2] it collects at the MPP from the luminescent coupling
    #: of the subcell above it (circuit/coupling.py); only subcells that collect any
    coupled_at_mpp_A_m2: dict = field(default_factory=dict)


def solve_string(elements, temperature_K, *, curve_points=0, reverse_fraction=0.3):
    """Solve a batch of series strings.

    Parameters
    ----------
    elements : sequence of element objects
        In current order; subcells must carry photocurrents. Parameters (B, 1).
    temperature_K : float or (B, 1) array
    curve_points : int
        Points of the traced light I-V to return (0 for none).
    reverse_fraction : float
        The curve extends into reverse bias down to -reverse_fraction * Voc (at least 0.3 V).

    Returns
    -------
    StringSolution

    Notes
    -----
    Designs whose tunnel junctions all stay below their peak current over the traced range are
    solved together, vectorized (the common case). A design whose trace reaches a junction's peak
    is traced piece by piece through the junction's negative-differential-resistance and thermal
    branches (trace.py), one design at a time.
    """
    string = SeriesString(elements, temperature_K)
    if not curve_points and all(e.kind == "resistor" or (e.kind == "subcell" and e.is_explicit())
                                for e in string.elements):
        simple = solve_explicit(string, temperature_K)
    else:
        simple = solve_on_path(string, temperature_K, curve_points, reverse_fraction)
    past_peak = simple["reaches_peak"]
    proof = simple.get("certificate")
    size = past_peak.size
    certificate = dict(
        certified=np.zeros(size, dtype=bool) if proof is None else proof.certified.copy(),
        bound=np.full(size, np.nan) if proof is None else np.array(proof.bound_W_m2, dtype=float),
        cells=np.zeros(size, dtype=int) if proof is None else proof.cells.copy())
    regime = np.array(["below peak" if string.tunnels else "no tunnel junction"] * past_peak.size,
                      dtype=object)
    branches = {t.name: np.full(past_peak.shape, "tunnel", dtype=object) for t in string.tunnels}
    for row in np.flatnonzero(past_peak):
        _trace_past_peak(string, simple, row, curve_points, reverse_fraction, regime, branches,
                         certificate)
    # open circuit is the point of zero current, where every element but a subcell has zero
    # voltage (a resistor, a tunnel junction and an isotype interface each carry no current
    # at zero volts): Voc is the sum of the subcells' open-circuit voltages. (Evaluated at the
    # pilot's open circuit, which leaves a rounding-level current, an interface that blocks
    # would answer with an enormous voltage, or none.)
    simple["voltages_voc"] = open_circuit_voltages(string, {"voltages": simple["voltages_voc"]})
    simple["voc"] = functools.reduce(np.add, simple["voltages_voc"])
    voc, jsc = simple["voc"], simple["jsc"]
    j_mpp, v_mpp, p_mpp, bound = _settled_mpp(simple, certificate["bound"])
    balance_error = _power_balance_error(string, simple["voltages_mpp"], p_mpp, temperature_K)

    with np.errstate(invalid="ignore", divide="ignore"):
        fill_factor = p_mpp / (voc * jsc)
    failed = ~(np.isfinite(voc) & np.isfinite(v_mpp) & np.isfinite(j_mpp)
               & np.isfinite(p_mpp))[:, 0]
    capped = simple.get("capped", np.zeros(failed.shape, dtype=bool))
    failed = failed | (~np.isfinite(jsc[:, 0]) & ~capped)
    if np.any(failed):
        warnings.warn(f"{int(failed.sum())} of {failed.size} designs found no operating point "
                      "for Jsc, the MPP or the fill factor; those results are NaN (Voc, the "
                      "point of zero current, stays)", RuntimeWarning, stacklevel=2)

    names = [e.name for e in string.elements]
    flat = lambda a: np.asarray(a, dtype=float)[:, 0]  # noqa: E731
    return StringSolution(
        element_names=names, voc_V=flat(voc), jsc_A_m2=flat(jsc), mpp_V=flat(v_mpp),
        mpp_A_m2=flat(j_mpp), mpp_W_m2=flat(p_mpp), fill_factor=flat(fill_factor),
        voltage_at_mpp_V={n: flat(v) for n, v in zip(names, simple["voltages_mpp"])},
        voltage_at_zero_current_V={n: flat(v) for n, v in zip(names, simple["voltages_voc"])},
        power_balance_error_W_m2=flat(balance_error), failed=failed,
        pilot_index=string.pilot_index[:, 0], curve=simple["curve"], regime=regime,
        tunnel_branch_at_mpp=branches, capped=capped,
        mpp_certified=certificate["certified"] & np.isfinite(flat(p_mpp)),
        mpp_bound_W_m2=np.where(np.isfinite(flat(p_mpp)), bound, np.nan),
        mpp_cells_checked=certificate["cells"],
        coupled_at_mpp_A_m2=_coupled_at_mpp(string, j_mpp, temperature_K))


def _coupled_at_mpp(string, j_mpp, temperature_K):
    """Subcell name -> the coupled photocurrent ΔJ it collects at the MPP current (B,)."""
    out = {}
    for element in string.elements:
        if getattr(element, "source", None) is not None:
            with np.errstate(invalid="ignore"):
                shift, _ = element.coupled_current(j_mpp, temperature_K)
            out[element.name] = np.where(np.isfinite(j_mpp), shift, np.nan)[:, 0]
    return out


def solve_strings(strings, subcells, temperature_K, *, curve_points=0, solve=None):
    """Solve the strings of a circuit in turn, with luminescent coupling across strings.

    Within a string the coupling follows the string current exactly (SeriesString). Where a
    subcell's ``luminescent_coupling`` sends light to the next subcell in optical order
    (``subcells``, sun side first) and that subcell is in a later string (4-terminal wiring),
    the emission is the source's at its own string's MPP, J0,rad (exp(Vj/Vt) - 1) with
    Vj = V + J Rs there, and adds to the lower subcell's photocurrent before its string is
    solved (each string is operated at its own MPP). Returns (strings, solutions): the strings
    as solved (the lower subcells with the added photocurrent) and their StringSolutions.
    ``solve``: the solve of one string (default :func:`solve_string`).
    """
    from siltandem.circuit.coupling import emission_A_m2

    strings = [list(s) for s in strings]
    targets = {}
    for upper, lower in zip(subcells, subcells[1:]):
        if upper.string < lower.string and np.any(upper.luminescent_coupling > 0):
            targets[lower.name] = upper
    solutions = []
    for k, string in enumerate(strings):
        crossing = {}
        for i, element in enumerate(string):
            source = targets.get(element.name) if element.kind == "subcell" else None
            if source is None:
                continue
            number = next(n for n, s in enumerate(strings[:k]) if any(e.name == source.name
                                                                       for e in s))
            done = solutions[number]
            v_junction = (done.voltage_at_mpp_V[source.name]
                          + done.mpp_A_m2 * np.asarray(source.series_ohm_m2)[:, 0])
            lit = next(e for e in strings[number] if e.name == source.name)
            shift = (lit.luminescent_coupling[:, 0]
                     * emission_A_m2(lit, v_junction[:, None], temperature_K)[:, 0])
            shift = np.where(np.isfinite(shift), shift, 0.0)
            string[i] = element.with_photocurrent(element.photocurrent_A_m2[:, 0] + shift)
            crossing[element.name] = shift
        solution = (solve or solve_string)(string, temperature_K, curve_points=curve_points)
        if crossing:
            from dataclasses import replace

            solution = replace(solution, coupled_at_mpp_A_m2={**solution.coupled_at_mpp_A_m2,
                                                              **crossing})
        solutions.append(solution)
    return strings, solutions


def _trace_past_peak(string, simple, row, curve_points, reverse_fraction, regime, branches,
                     certificate):
    """Design ``row``, whose trace reached a junction's peak, traced piece by piece through
    its junctions' branches (trace.py); its answers written into ``simple``, ``regime``,
    ``branches`` and ``certificate`` (arrays of the batch, in place)."""
    from siltandem.solve.trace import solve_path

    one = string.rows(np.array([row]))
    start = None
    if "samples" in simple:
        # the vectorized pass sampled this design's first piece already
        ts, e = simple["samples"]
        pick = slice(row, row + 1)
        start = dict(voc=simple["voc"][pick], t_voc=simple["t_voc"][pick],
                     voltages_voc=[v[pick] for v in simple["voltages_voc"]],
                     samples=(ts[pick], {k: (x[pick] if k != "voltages" else [v[pick] for v in x])
                                         for k, x in e.items()}))
    answer = solve_path(one, curve_points=curve_points, reverse_fraction=reverse_fraction,
                        start=start)
    for key in ("voc", "jsc", "v_mpp", "j_mpp", "p_mpp"):
        simple[key][row] = answer[key]
    for k, v in enumerate(answer["voltages_mpp"]):
        simple["voltages_mpp"][k][row] = v
    for k, v in enumerate(answer["voltages_voc"]):
        simple["voltages_voc"][k][row] = v
    for name, branch in answer["branches_mpp"].items():
        branches[name][row] = branch
    regime[row] = answer["regime"]
    certificate["certified"][row] = answer["certificate"].certified[0]
    certificate["bound"][row] = answer["certificate"].bound_W_m2[0]
    certificate["cells"][row] = answer["certificate"].cells[0]
    if curve_points:
        simple["curve"]["current_A_m2"][row] = answer["curve"]["current_A_m2"]
        simple["curve"]["voltage_V"][row] = answer["curve"]["voltage_V"]
        for element in string.elements:
            simple["curve"][element.name][row] = answer["curve"][element.name]


def _settled_mpp(simple, bound):
    """(J, V, P) of the MPP (B, 1 each) and the power bound (B,) as reported: a string that
    gives no power (blocked) has its best point at open circuit (P = 0 there, never a
    rounding-level negative power); where no MPP was found, no half of one either (a current
    from one point, a voltage from another). ``simple["voltages_mpp"]`` follows, in place."""
    voc, j_mpp, v_mpp, p_mpp = (simple[k] for k in ("voc", "j_mpp", "v_mpp", "p_mpp"))
    dead = np.isfinite(p_mpp) & (p_mpp <= 0)
    if np.any(dead):
        j_mpp, v_mpp, p_mpp = (np.where(dead, 0.0, j_mpp), np.where(dead, voc, v_mpp),
                               np.where(dead, 0.0, p_mpp))
        bound = np.where(dead[:, 0], np.fmax(bound, 0.0), bound)
        simple["voltages_mpp"] = [np.where(dead, vo, vm) for vm, vo in
                                  zip(simple["voltages_mpp"], simple["voltages_voc"])]
    lost = ~np.isfinite(p_mpp)
    if np.any(lost):
        j_mpp, v_mpp = np.where(lost, np.nan, j_mpp), np.where(lost, np.nan, v_mpp)
        simple["voltages_mpp"] = [np.where(lost, np.nan, v) for v in simple["voltages_mpp"]]
    return j_mpp, v_mpp, p_mpp, bound


def _power_balance_error(string, voltages_mpp, p_mpp, temperature_K):
    """|sum_i V_i J_i(V_i) - P| at the MPP (B, 1), each J_i from the element's own forward law
    (summing V_i J would agree by construction and prove nothing)."""
    balance = np.zeros_like(p_mpp)
    for element, v_i in zip(string.elements, voltages_mpp):
        j_i, _ = element.current(v_i, temperature_K)
        balance = balance + v_i * j_i
    return np.abs(balance - p_mpp)
