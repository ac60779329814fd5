"""Run a series string of siltandem elements through ngspice, a general-purpose circuit solver.

This is test support only: an independent solver to cross-check ``siltandem.solve.solve_string``.
It writes an ngspice netlist (a "deck") for one design of a string, runs ``ngspice -b`` in a
temporary folder and reads back what ngspice's own ``wrdata`` command wrote.

The mapping (area 1 m^2, so A/m^2 -> A, ohm m^2 -> ohm, S/m^2 -> S)
----------------------------------------------------------------------
Element k of the list sits between nodes ``n{k}`` (low) and ``n{k+1}`` (high); ``n0`` is ground
(SPICE's node ``0``) and the string's positive terminal is the last node. A subcell is

* a current source Jph pushing current into its junction node ``j{k}`` (the p side),
* an ideality-1 diode, saturation current J01 = J0,rad / ERE (ngspice's built-in diode model),
* an ideality-2 diode for J02 when J02 > 0,
* a shunt resistor 1/G when G > 0,

all between ``j{k}`` and ``n{k}``, then its series resistance from ``j{k}`` to ``n{k+1}``. A
resistor element is a resistor from ``n{k}`` to ``n{k+1}``. A zero resistance is a 0 V source
(a plain wire; SPICE refuses R = 0). Reverse breakdown is not mapped (ngspice's diode has a
different breakdown law); such a subcell is refused.

A tunnel junction is one behavioural current source (a B-source) from ``n{k}`` to ``n{k+1}``
carrying J_tunnel(u) with u = v(n{k}) - v(n{k+1}): the stack current drives the junction in
its own forward direction (p++ side towards ``n{k}``), so its element voltage in siltandem's
direction is v(n{k+1}) - v(n{k}) = -u, and the current it carries in the stack's direction is
J_tunnel(u). The law is written out term by term from the law's own internal numbers
(``esaki.prepare_tunnel_law``, exact peak, as the element uses it):

    J(u) = a (u/v1) exp(1 - u/v1) + k (exp(c2 (u - vv)) - exp(-c2 (u + vv)))
           + j0 (exp(u / (n Vt)) - 1),      k = jv / (1 - exp(-2 c2 vv)).

ngspice evaluates it, and its derivative for Newton's method, from that text; nothing of ours
runs inside ngspice. Details of the text:

* every quotient is a product with a precomputed reciprocal, because ngspice's B-source
  division adds a tiny "fudge factor" to the divisor;
* our law continues each exponential along its tangent beyond an exponent of 300; the plain
  text does not, and ngspice 39's B-source ``exp()`` stops at 1e99 (an exponent of 227.96,
  measured). The plain text is our law wherever every exponent stays below that
  (:func:`tunnel_exponents`; the tests assert it for what they compare). With
  ``limited_exponentials`` the deck writes the tangent continuation itself, our law at every
  voltage, in a form that never reaches ngspice's cap (see :func:`tunnel_current_expression`).

Fairness adjustments
--------------------
* Thermal voltage. ngspice's diode model computes kT/q from its own constants; measured with
  :func:`ngspice_thermal_voltage_V` (one diode at a known current, solved to 1e-15), ngspice 39
  uses the CODATA 2014 values (k = 1.38064852e-23 J/K, q = 1.6021766208e-19 C; P. J. Mohr,
  D. B. Newell, B. N. Taylor, Rev. Mod. Phys. 88 (2016) 035009), 3.4e-7 relative below ours
  (CODATA 2018 through scipy). We do not trust a remembered value: the deck sets each diode's
  emission coefficient to N = n * (our kT/q) / (ngspice's measured kT/q), so that ngspice's
  N * Vt equals our n * Vt exactly, whatever constants the installed ngspice uses.
* Temperature. ``.options temp`` and ``tnom`` (in degC) are both set to the design's
  temperature, so ngspice applies no temperature scaling to IS; the measured kT/q already
  includes ngspice's degC -> K conversion.
* GMIN. ngspice puts a conductance GMIN (default 1e-12 S, from memory) across every junction;
  our law has none. We set it to 1e-18 S (1e-18 A per volt, far below anything compared).
* Thermal voltage of a tunnel junction's thermal term. A B-source knows no built-in physical
  constants, so the deck carries our n Vt (CODATA 2018, siltandem.constants) as a number; no
  adjustment is needed there.
* Convergence. ngspice's defaults (RELTOL 1e-3, from memory) stop Newton's method far from
  float precision; the deck tightens RELTOL to 1e-10, VNTOL to 1e-12 V and ABSTOL to 1e-12 A,
  and writes 16 significant digits.

No ``.nodeset`` is needed for subcells and resistors: with built-in diodes (not behavioural
sources) every device's current is monotone in its voltage, the DC solution is unique and
ngspice's junction-voltage limiting keeps Newton's method from running away; the test compares
every point anyway. A tunnel junction is neither monotone nor limited (ngspice applies no
junction-voltage limiting to a B-source), so a deck with one may take starting node voltages:
``nodeset`` (node -> V, written as a ``.nodeset`` line), for instance from our own solution
through :func:`node_voltages`. ngspice uses them for the first point of a DC sweep only; every
later point starts from the one before (continuation).

Sign convention
---------------
ngspice reports the current of a voltage source as positive when it flows into the source's
``+`` node, through the source, out of its ``-`` node. The terminal source ``Vterm`` has ``+`` on
the string's positive terminal and ``-`` on ground; a string delivering power pushes current out
of its positive terminal into ``Vterm``'s ``+`` node, so siltandem's current (generated current
positive) is ``J = +i(Vterm) / area``, and the terminal voltage is ``V = v(top) - v(0)``. Element
voltages ``v(n{k+1}) - v(n{k})`` are in siltandem's direction too: positive for a subcell in the
power quadrant, ``-J R`` for a resistor.
"""
from functools import cache
import math
import re
import shutil
import subprocess
import tempfile
import time
from pathlib import Path

import numpy as np

from siltandem.constants import thermal_voltage_V
from siltandem.laws import esaki

#: device area of the netlist [m^2]: the string's densities become plain amperes and ohms
AREA_M2 = 1.0
#: ngspice options for the comparison (see the module docstring)
OPTIONS = "reltol=1e-10 vntol=1e-12 abstol=1e-12 gmin=1e-18 itl1=500 itl2=500"
#: seconds before a stuck ngspice is stopped
TIMEOUT_S = 60


class NgspiceError(RuntimeError):
    """ngspice failed, or wrote no result."""


def ngspice_executable():
    """Path of the ngspice program on PATH, or None."""
    return shutil.which("ngspice")


def ngspice_version():
    """The version ngspice prints (e.g. "39"), or "unknown"."""
    done = subprocess.run([ngspice_executable(), "-v"], capture_output=True, text=True,
                          timeout=TIMEOUT_S)
    found = re.search(r"ngspice-(\S+)", done.stdout + done.stderr)
    return found.group(1) if found else "unknown"


def _number(value):
    """A float as ngspice reads it, without loss (17 significant digits)."""
    value = float(value)
    if not math.isfinite(value):
        raise ValueError(f"cannot put {value!r} into a netlist")
    return f"{value:.17g}"


def _read_wrdata(path):
    """Columns of an ngspice ``wrdata`` file written with ``wr_singlescale`` and ``wr_vecnames``."""
    lines = Path(path).read_text().splitlines()
    names = lines[0].split()
    rows = np.array([[float(x) for x in line.split()] for line in lines[1:] if line.strip()],
                    dtype=float).reshape(-1, len(names))
    return {name: rows[:, i] for i, name in enumerate(names)}


def run_deck(circuit_lines, control_lines, outputs, *, options=OPTIONS, timings=None,
             strict=True):
    """Run one ngspice deck in batch mode and read its ``wrdata`` files.

    Parameters
    ----------
    circuit_lines : list of str
        Netlist lines (no title, no ``.end``).
    control_lines : list of str
        Lines of the ``.control`` block; ``{out}`` in them is replaced by the output folder.
    outputs : list of str
        Names of the files the control block writes there.

    options : str
        The ``.options`` line's settings (default: the tight tolerances of the comparison).
    timings : list or None
        If a list, the wall time [s] of the ngspice process (start to exit) is appended to it.
    strict : bool
        True: any warning of trouble in ngspice's log (singular matrix, no convergence, gmin or
        source stepping that failed...) raises :class:`NgspiceError`, even if ngspice recovered.
        False: only a failed run or a missing output raises; the log is returned under "log",
        for the caller to judge (e.g. a warning ngspice recovered from on a sweep's first point).

    Returns
    -------
    dict
        File name -> {column name: ndarray} (and "log" -> str when not strict).
    """
    executable = ngspice_executable()
    if executable is None:
        raise NgspiceError("ngspice is not on PATH (Debian package 'ngspice')")
    with tempfile.TemporaryDirectory(prefix="siltandem-ngspice-") as folder:
        control = [line.replace("{out}", folder) for line in control_lines]
        deck = ["* siltandem cross-check", f".options {options}", *circuit_lines,
                ".control", "set wr_singlescale", "set wr_vecnames", "option numdgt=16",
                *control, "quit", ".endc", ".end", ""]
        deck_path = Path(folder) / "string.cir"
        deck_path.write_text("\n".join(deck))
        started = time.perf_counter()
        done = subprocess.run([executable, "-b", str(deck_path)], capture_output=True,
                              text=True, timeout=TIMEOUT_S, cwd=folder)
        if timings is not None:
            timings.append(time.perf_counter() - started)
        log = done.stdout + done.stderr
        trouble = re.search(r"(?im)^.*(error|singular|no convergence|too small|failed).*$", log)
        if done.returncode != 0 or (trouble and strict):
            raise NgspiceError(f"ngspice failed (exit {done.returncode}):\n{log}\n"
                               "deck:\n" + "\n".join(deck))
        results = {}
        for name in outputs:
            path = Path(folder) / name
            if not path.exists():
                raise NgspiceError(f"ngspice wrote no {name}:\n{log}")
            results[name] = _read_wrdata(path)
    if not strict:
        results["log"] = log
    return results


@cache
def ngspice_thermal_voltage_V(temperature_K):
    """kT/q [V] as ngspice's diode model uses it at ``temperature_K``, measured.

    One diode (IS = 1e-20 A, N = 1) carries 1 A from a current source; its voltage is
    V = Vt ln(1 + I/IS), so Vt = V / ln1p(1e20). GMIN (1e-18 S here) changes the current by
    1e-18 relative; Newton's method is run to 1e-12, far below the 3.4e-7 being measured.
    """
    saturation_A, current_A = 1e-20, 1.0
    celsius = _number(temperature_K - 273.15)
    circuit = [f".options temp={celsius} tnom={celsius} reltol=1e-12 vntol=1e-15",
               f".model probe D(IS={_number(saturation_A)} N=1)",
               f"Iprobe 0 a DC {_number(current_A)}", "Dprobe a 0 probe"]
    out = run_deck(circuit, ["op", "wrdata {out}/probe.txt v(a)"], ["probe.txt"])
    voltage = out["probe.txt"]["v(a)"][-1]
    return voltage / math.log1p(current_A / saturation_A)


def _scalar(array, what):
    a = np.asarray(array, dtype=float)
    if a.size != 1:
        raise ValueError(f"{what}: the ngspice helper takes one design (B = 1), got {a.size}")
    return float(a.reshape(-1)[0])


def tunnel_law_numbers(element, temperature_K):
    """The numbers of one tunnel junction's law, as written into the deck (floats).

    ``a, v1, jv, vv, c2, j0, n, t`` are ``esaki.prepare_tunnel_law(**element._law(T))`` (the law
    the element evaluates, exact peak); ``k = jv / (1 - exp(-2 c2 vv))`` is the excess term's
    prefactor and ``nvt = n kT/q`` with our kT/q (CODATA 2018).
    """
    prepared = esaki.prepare_tunnel_law(**element._law(temperature_K))
    names = ("a", "v1", "jv", "vv", "c2", "j0", "n", "t")
    numbers = {name: _scalar(value, element.name) for name, value in zip(names, prepared)}
    numbers["k"] = numbers["jv"] / -math.expm1(-2.0 * numbers["c2"] * numbers["vv"])
    numbers["nvt"] = numbers["n"] * float(thermal_voltage_V(numbers["t"]))
    return numbers


def tunnel_current_expression(u, numbers, *, limited=False):
    """ngspice B-source text of the tunnel current [A] (area AREA_M2) at forward voltage ``u``.

    ``u`` is an expression text (e.g. ``"v(n1,n2)"``). Quotients are products with precomputed
    reciprocals (ngspice's B-source division adds a fudge factor to the divisor). ``limited``
    writes each exponential as our law does, continued along its tangent beyond an exponent of
    300: ``exp(min(x, 300)) * (1 + max(x - 300, 0))``, identical to the law at every voltage;
    otherwise plain ``exp(x)``, identical to it wherever every exponent stays below 300 -- and
    below 227.96, where ngspice 39's B-source ``exp()`` stops at 1e99 (measured; beyond it the
    value of the plain text stops growing there).
    """
    limit = _number(esaki.EXP_LIMIT)

    def exp(x):
        if limited:
            # ngspice 39's B-source exp() returns at most 1e99 (an exponent of 227.96, measured):
            # e**300 is written as a product of two halves, which that cap does not reach
            half = f"exp(0.5*min({x},{limit}))"
            return f"{half}*{half}*(1+max(({x})-{limit},0))"
        return f"exp({x})"

    inv_v1, inv_nvt = _number(1.0 / numbers["v1"]), _number(1.0 / numbers["nvt"])
    c2, vv = _number(numbers["c2"]), _number(numbers["vv"])
    slope, k, j0 = (_number(numbers["a"] * AREA_M2 / numbers["v1"]),
                    _number(numbers["k"] * AREA_M2), _number(numbers["j0"] * AREA_M2))
    tunnelling = f"{slope}*({u})*{exp(f'1-({u})*{inv_v1}')}"
    excess = f"{k}*({exp(f'{c2}*(({u})-{vv})')}-{exp(f'-{c2}*(({u})+{vv})')})"
    thermal = f"{j0}*({exp(f'({u})*{inv_nvt}')}-1)"
    return f"{tunnelling}+{excess}+{thermal}"


def tunnel_current_numpy(u, numbers):
    """The same sum as :func:`tunnel_current_expression`, in numpy, per area [A/m^2].

    Plain exponentials (no tangent continuation), as the deck writes them (expm1 for the thermal
    term's exp(x) - 1: the same up to rounding).
    """
    u = np.asarray(u, dtype=float)
    a, v1, vv, c2, j0, k, nvt = (numbers[key] for key in ("a", "v1", "vv", "c2", "j0", "k", "nvt"))
    return (a * (u / v1) * np.exp(1.0 - u / v1)
            + k * (np.exp(c2 * (u - vv)) - np.exp(-c2 * (u + vv))) + j0 * np.expm1(u / nvt))


def tunnel_exponents(u, numbers):
    """The largest exponent the tunnel law takes at forward voltage(s) ``u`` [V].

    The plain B-source text is our law only where this stays below ngspice's exp() cap (227.96)
    and so below the law's own limit (300).
    """
    u = np.asarray(u, dtype=float)
    v1, vv, c2, nvt = (numbers[key] for key in ("v1", "vv", "c2", "nvt"))
    return np.max([1.0 - u / v1, c2 * (u - vv), -c2 * (u + vv), u / nvt], axis=0)


def node_voltages(elements, temperature_K, *, element_voltages_V, current_A_m2):
    """Every node voltage of :func:`string_circuit`'s deck at one of our solution's points.

    ``element_voltages_V`` maps element name -> its voltage (siltandem's direction) and
    ``current_A_m2`` is the string current there. Node ``n{k+1}`` is the sum of the voltages of
    elements 0..k; a subcell's junction node is its high node plus J Rs (its series drop).
    Returns {node: V}, for ``nodeset``.
    """
    nodes, below = {}, 0.0
    for k, element in enumerate(elements):
        v_k = float(element_voltages_V[element.name])
        if element.kind == "subcell":
            series = _scalar(element.series_ohm_m2, element.name)
            nodes[f"j{k}"] = below + v_k + float(current_A_m2) * series
        below += v_k
        nodes[f"n{k + 1}"] = below
    return nodes


def string_circuit(elements, temperature_K, *, terminal, match_thermal_voltage=True,
                   nodeset=None, limited_exponentials=False):
    """Netlist lines of one design of a series string.

    Parameters
    ----------
    elements : sequence of Subcell / Resistor / TunnelJunction
        In siltandem's current order, with photocurrents; parameters of shape (1, 1).
    temperature_K : float
    terminal : {"voltage", "open"}
        "voltage": a DC source ``Vterm`` across the terminals (to be swept); "open": none.
    match_thermal_voltage : bool
        Scale each diode's N so that ngspice's N Vt equals ours (the fair comparison); False
        leaves N = 1 and 2, to show what ngspice's own constants do.
    nodeset : dict or None
        Node -> starting voltage [V] for ngspice's first operating point (a ``.nodeset`` line).
    limited_exponentials : bool
        Write a tunnel junction's exponentials continued along their tangents beyond 300, as
        our law does (see :func:`tunnel_current_expression`); default plain ``exp``.

    Returns
    -------
    lines : list of str
    element_nodes : list of (name, low node, high node)
    top : str
        The positive terminal's node.
    """
    temperature_K = _scalar(temperature_K, "temperature")
    ratio = (thermal_voltage_V(temperature_K) / ngspice_thermal_voltage_V(temperature_K)
             if match_thermal_voltage else 1.0)
    celsius = _number(temperature_K - 273.15)
    lines = [f".options temp={celsius} tnom={celsius}"]
    element_nodes = []

    def resistor(name, a, b, ohm_m2):
        if ohm_m2 > 0:
            lines.append(f"R{name} {a} {b} {_number(ohm_m2 / AREA_M2)}")
        else:
            lines.append(f"V{name} {a} {b} DC 0")   # a wire (R = 0 is not allowed)

    for k, element in enumerate(elements):
        low, high = ("0" if k == 0 else f"n{k}"), f"n{k + 1}"   # "0" is SPICE's ground
        element_nodes.append((element.name, low, high))
        if element.kind == "resistor":
            resistor(f"e{k}", low, high, _scalar(element.series_ohm_m2, element.name))
            continue
        if element.kind == "tunnel":
            # forward voltage u = v(low) - v(high); the source carries J_tunnel(u) from low to
            # high (SPICE "B n+ n- I=..." drives current from n+ through itself to n-)
            u = f"-v({high})" if low == "0" else f"v({low},{high})"
            numbers = tunnel_law_numbers(element, temperature_K)
            law = tunnel_current_expression(u, numbers, limited=limited_exponentials)
            lines.append(f"Btj{k} {low} {high} I={law}")
            continue
        if element.kind != "subcell":
            raise ValueError(f"element {element.name!r}: kind {element.kind!r} has no ngspice map")
        if (_scalar(element.breakdown_factor, element.name) > 0
                and math.isfinite(_scalar(element.breakdown_V, element.name))):
            raise ValueError(f"element {element.name!r}: reverse breakdown is not mapped to "
                             "ngspice; give it breakdown_factor 0")
        junction = f"j{k}"
        jph = _scalar(element.photocurrent_A_m2, element.name) * AREA_M2
        j01 = _scalar(element.j01_A_m2(temperature_K), element.name) * AREA_M2
        j02 = _scalar(element.j02_A_m2, element.name) * AREA_M2
        shunt = _scalar(element.shunt_S_m2, element.name) * AREA_M2
        # SPICE "I n+ n- value" drives current from n+ through the source to n-: into the junction
        lines.append(f"Iph{k} {low} {junction} DC {_number(jph)}")
        lines.append(f".model dfirst{k} D(IS={_number(j01)} N={_number(ratio)})")
        lines.append(f"Dfirst{k} {junction} {low} dfirst{k}")
        if j02 > 0:
            lines.append(f".model dsecond{k} D(IS={_number(j02)} N={_number(2.0 * ratio)})")
            lines.append(f"Dsecond{k} {junction} {low} dsecond{k}")
        if shunt > 0:
            lines.append(f"Rsh{k} {junction} {low} {_number(1.0 / shunt)}")
        resistor(f"s{k}", junction, high, _scalar(element.series_ohm_m2, element.name))
    top = f"n{len(elements)}"
    if nodeset:
        lines.append(".nodeset " + " ".join(f"v({node})={_number(value)}"
                                            for node, value in nodeset.items()))
    if terminal == "voltage":
        lines.append(f"Vterm {top} 0 DC 0")
    elif terminal != "open":
        raise ValueError(f"terminal must be 'voltage' or 'open', not {terminal!r}")
    return lines, element_nodes, top


def _node_voltage(columns, node):
    return np.zeros_like(columns["i(vterm)"]) if node == "0" else columns[f"v({node})"]


def _columns_to_string(columns, element_nodes, top):
    current = +columns["i(vterm)"] / AREA_M2   # into Vterm's + node = generated current
    out = {"voltage_V": columns[f"v({top})"], "current_A_m2": current}
    for name, low, high in element_nodes:
        out[name] = _node_voltage(columns, high) - _node_voltage(columns, low)
    return out


def sweep(elements, temperature_K, *, start_V, stop_V, points, nodeset=None, options=OPTIONS,
          timings=None, strict=True, limited_exponentials=False):
    """ngspice DC sweep of the terminal voltage from ``start_V`` to ``stop_V``.

    ``stop_V < start_V`` sweeps downwards (a negative step). ``nodeset`` (node -> V) starts
    ngspice's first point; each later point starts from the previous one. ``options``,
    ``timings`` and ``strict`` go to :func:`run_deck` (not strict: the log is under "log");
    ``limited_exponentials`` to :func:`string_circuit`.

    Returns
    -------
    dict
        ``voltage_V``, ``current_A_m2`` (siltandem's signs) and each element's voltage [V], as
        ngspice computed them at its own sweep points, in sweep order.
    """
    lines, element_nodes, top = string_circuit(elements, temperature_K, terminal="voltage",
                                               nodeset=nodeset,
                                               limited_exponentials=limited_exponentials)
    step = (stop_V - start_V) / (points - 1)
    nodes = sorted({n for _, a, b in element_nodes for n in (a, b)} - {"0"})
    lines.append(f".dc Vterm {_number(start_V)} {_number(stop_V)} {_number(step)}")
    done = run_deck(lines, ["run", "wrdata {out}/sweep.txt i(vterm) "
                            + " ".join(f"v({n})" for n in nodes)],
                    ["sweep.txt"], options=options, timings=timings, strict=strict)
    out = _columns_to_string(done["sweep.txt"], element_nodes, top)
    if not strict:
        out["log"] = done["log"]
    return out


def short_circuit_current_A_m2(elements, temperature_K):
    """ngspice operating point with the terminals shorted (Vterm = 0): Jsc [A/m^2]."""
    lines, _, _ = string_circuit(elements, temperature_K, terminal="voltage")
    columns = run_deck(lines, ["op", "wrdata {out}/op.txt i(vterm)"], ["op.txt"])["op.txt"]
    return float(+columns["i(vterm)"][-1] / AREA_M2)


def open_circuit_voltage_V(elements, temperature_K, *, match_thermal_voltage=True):
    """ngspice operating point with the terminals open: Voc [V]."""
    lines, _, top = string_circuit(elements, temperature_K, terminal="open",
                                   match_thermal_voltage=match_thermal_voltage)
    columns = run_deck(lines, ["op", f"wrdata {{out}}/op.txt v({top})"], ["op.txt"])["op.txt"]
    return float(columns[f"v({top})"][-1])


def maximum_power_point(elements, temperature_K, *, start_V, stop_V, points=201):
    """ngspice's own maximum power point: (V [V], J [A/m^2], P [W/m^2]).

    A sweep from ``start_V`` to ``stop_V``; then a sweep of ``points`` between the neighbours of
    its best point; then the vertex of the parabola through the best three points of that one.
    Refuses a best point at either end of a sweep (no interior maximum).
    """
    lo, hi = start_V, stop_V
    for _ in range(2):
        s = sweep(elements, temperature_K, start_V=lo, stop_V=hi, points=points)
        v, p = s["voltage_V"], s["voltage_V"] * s["current_A_m2"]
        best = int(np.argmax(p))
        if best in (0, len(p) - 1):
            raise NgspiceError(f"no interior maximum of power between {lo} V and {hi} V")
        lo, hi = v[best - 1], v[best + 1]
    x, y = v[best - 1:best + 2], p[best - 1:best + 2]
    c2, c1, c0 = np.polyfit(x - x[1], y, 2)
    shift = -c1 / (2 * c2)
    power = c0 - c1 ** 2 / (4 * c2)
    voltage = x[1] + shift
    return voltage, power / voltage, power
