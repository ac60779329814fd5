"""Thermionic-field emission with a fixed interface sheet charge (laws/field_emission_sheet.py) and
the sheet_charge_cm2 key with either transport (circuit/isotype.py).

Checks against sources outside the law:

* a slow reference kept here, in physical units: each side's interface displacement field from its
  own Boltzmann first integral of Poisson's equation, eps E^2 / 2 = kT N (e^u - 1 - u) with u the
  bending toward accumulation (S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed. 2007,
  ch. 2-3); the split from charge neutrality written out for each carrier type (the two space
  charges and the sheet charge q sigma sum to zero, Gauss's law), solved with scipy.optimize.brentq;
  the depletion side's field from its own side; then the WKB exponent integrated numerically
  (scipy.integrate.quad) through the parabolic depletion barrier with that field and the current
  as the energy integral of transmission times the Boltzmann supply (C. R. Crowell, V. L. Rideout,
  Solid-State Electron. 12 (1969) 89; F. A. Padovani, R. Stratton, Solid-State Electron. 9 (1966)
  695; K. Yang, J. R. East, G. I. Haddad, Solid-State Electron. 36 (1993) 321);
* zero charge: the law of laws/field_emission.py (exact depletion side) to rounding;
* no tunnelling (no spike states below the top, or E00 -> 0): the thermionic law with a sheet
  charge of laws/interface_charge.py;
* the sign: a charge that attracts the majority carriers (positive at an n-N interface) lowers
  the spike's top over the accumulation side's Fermi level and carries more current, one that
  repels them less (Sze & Ng ch. 3: fixed interface charge and band bending);
* the inverse against the forward law, dJ/dV against central differences, the certificate's slope
  range against dense sampling.
"""
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import integrate, optimize

from siltandem.constants import BOLTZMANN_EV_K, ELECTRON_MASS_KG, ELEMENTARY_CHARGE_C, PLANCK_J_S, \
    VACUUM_PERMITTIVITY_F_M
from siltandem.laws import field_emission as fe
from siltandem.laws import field_emission_sheet as fs
from siltandem.laws import thermionic as te
from siltandem.laws.interface_charge import reduced_sheet_charge
from siltandem.materials import load_material
from siltandem.materials.tunnelling import tunnelling_mass_ratio

HBAR = PLANCK_J_S / (2 * math.pi)
Q = ELEMENTARY_CHARGE_C
EPS0 = VACUUM_PERMITTIVITY_F_M
T = 300.0
KT = BOLTZMANN_EV_K * T
LAW = dict(barrier_eV=0.5, built_in_V=0.4, alpha=0.8, richardson_A_m2_K2=5e5, temperature_K=T,
           field_energy_eV=0.03, spike_eV=0.45)


def case(carrier, upper, lower, n_upper_cm3, n_lower_cm3):
    """Law parameters from the library (the Boltzmann alignment of laws/thermionic.py as given
    inputs), E00 and the sides' numbers for the reference."""
    a, b = load_material(upper), load_material(lower)
    electron = carrier == "electron"
    dos = [(m.conduction_dos_per_m3 if electron else m.valence_dos_per_m3)(T) for m in (a, b)]
    n_a, n_b = n_upper_cm3 * 1e6, n_lower_cm3 * 1e6
    al = te.isotype_band_alignment(
        carrier=carrier, affinity_a_eV=a.electron_affinity_eV, gap_a_eV=a.gap_eV(T), band_dos_a_m3=dos[0],
        doping_a_m3=n_a, relative_permittivity_a=a.relative_permittivity,
        affinity_b_eV=b.electron_affinity_eV, gap_b_eV=b.gap_eV(T), band_dos_b_m3=dos[1],
        doping_b_m3=n_b, relative_permittivity_b=b.relative_permittivity, temperature_K=T)
    first = bool(al.a_accumulates)
    acc, dep = (a, b) if first else (b, a)
    n1, n2 = (n_a, n_b) if first else (n_b, n_a)
    mass = tunnelling_mass_ratio(dep, carrier)
    e00 = float(fe.field_energy_eV(doping_m3=n2, relative_permittivity=dep.relative_permittivity, mass_ratio=mass))
    rich = min(getattr(m, "electron_richardson_A_m2_K2" if electron else "hole_richardson_A_m2_K2") for m in (a, b))
    law = dict(barrier_eV=float(al.barrier_eV), built_in_V=float(al.built_in_V), alpha=float(al.alpha),
               richardson_A_m2_K2=rich, temperature_K=T, field_energy_eV=e00, spike_eV=float(al.offset_eV))
    sides = dict(n1=n1, n2=n2, er1=acc.relative_permittivity, er2=dep.relative_permittivity, mass=mass,
                 carrier=carrier)
    return law, sides


def field_d(eps, n, u):
    """|D| = eps |E| [C/m^2] at the interface of a side bent u (kT) toward accumulation."""
    return math.sqrt(2 * eps * Q * KT * n * (math.expm1(u) - u))


def reference_split(V, law, sides, sigma_cm2):
    """(u1, u2): side 1's bending toward accumulation and side 2's toward depletion [kT] at the
    voltage V from charge neutrality (module docstring); sigma_cm2 the fixed charge in elementary
    charges per cm^2 (> 0 positive)."""
    eps1, eps2 = sides["er1"] * EPS0, sides["er2"] * EPS0
    vb = (law["built_in_V"] - V) / KT
    sigma = sigma_cm2 * 1e4 * Q                                   # C/m^2, signed

    def neutrality(u1):
        """Total charge per area [C/m^2] of side 1, side 2 and the sheet; rises with u1."""
        u2 = vb - u1                                              # side 2's bending toward depletion
        d1 = math.copysign(field_d(eps1, sides["n1"], u1), u1)     # > 0: side 1 accumulates
        d2 = math.copysign(field_d(eps2, sides["n2"], -u2), u2)    # > 0: side 2 depletes
        if sides["carrier"] == "electron":
            # accumulated electrons (-d1), depleted donors (+d2), the sheet
            return -(-d1 + d2 + sigma)
        # accumulated holes (+d1), depleted acceptors (-d2), the sheet
        return d1 - d2 + sigma

    lo, hi = -1.0, vb + 1.0
    while neutrality(lo) > 0:
        lo *= 2
    while neutrality(hi) < 0:
        hi *= 2
    u1 = optimize.brentq(neutrality, lo, hi, xtol=1e-15, rtol=1e-14)
    return u1, vb - u1


def reference_current(V, law, sides, sigma_cm2):
    """Slow reference J(V) [A/m^2] (module docstring), physical units, and the split (u1, u2)."""
    eps2 = sides["er2"] * EPS0
    u1, u2 = reference_split(V, law, sides, sigma_cm2)
    top = law["barrier_eV"] - u1 * KT                             # the spike's top over side 1's Fermi level

    def supply(E):                                                 # Boltzmann supply, both sides
        return math.exp((V - E) / KT) - math.exp(-E / KT)

    scale = law["richardson_A_m2_K2"] * T / BOLTZMANN_EV_K
    above, _ = integrate.quad(lambda E: supply(E) * math.exp(top / KT), top, top + 60 * KT,
                              epsabs=0, epsrel=1e-11, limit=200)
    below = 0.0
    if u2 > 0:
        f0 = field_d(eps2, sides["n2"], -u2) / eps2                # depletion side's field [V/m]
        curvature = Q * sides["n2"] / (2 * eps2)                   # E(x) = top - f0 x + curvature x^2 [eV]
        x_vertex = f0 / (2 * curvature)
        lowest = max(top - f0 * x_vertex / 2, top - law["spike_eV"])
        m = sides["mass"] * ELECTRON_MASS_KG

        def exponent(E):
            depth = top - E
            x_turn = (f0 - math.sqrt(max(f0 * f0 - 4 * curvature * depth, 0.0))) / (2 * curvature)
            val, _ = integrate.quad(lambda x: math.sqrt(max(2 * m * Q * (depth - f0 * x + curvature * x * x), 0.0)),
                                    0.0, x_turn, epsabs=0, epsrel=1e-11, limit=200)
            return 2 * val / HBAR

        below, _ = integrate.quad(lambda E: math.exp(-exponent(E)) * supply(E) * math.exp(top / KT),
                                  lowest, top, epsabs=0, epsrel=1e-9, limit=400)
    return scale * (below + above) * math.exp(-top / KT), u1, u2


def reduced(sides, sigma_cm2):
    return float(reduced_sheet_charge(sigma_cm2, carrier=sides["carrier"], depletion_doping_m3=sides["n2"],
                                      depletion_permittivity=sides["er2"], temperature_K=T))


# (carrier, upper, lower, upper doping, lower doping, voltages, sheet charges [cm^-2])
CASES = [
    ("hole", "GaP", "Si", 1e19, 1e19, (-0.3, 0.1), (-3e12, 3e12)),        # p-Si accumulates
    ("hole", "GaP", "Si", 1e18, 1e18, (-0.2, 0.05), (-1e12, 5e11)),
    ("electron", "GaP", "Si", 1e17, 1e19, (-0.2, 0.05), (-2e12, 1e12)),   # n-Si accumulates
]


@pytest.mark.parametrize("carrier, upper, lower, n_upper, n_lower, volts, charges", CASES)
def test_matches_the_poisson_wkb_reference(carrier, upper, lower, n_upper, n_lower, volts, charges):
    """2e-5 relative, the tolerance of tests/test_field_emission.py and
    tests/test_field_emission_fermi.py against the same kind of reference (the gain's fixed
    quadrature and quad's tolerance); the uncharged law misses the reference by far more, so the
    check sees the charge."""
    law, sides = case(carrier, upper, lower, n_upper, n_lower)
    assert law["barrier_eV"] > 0 and law["built_in_V"] > 0
    for sigma in charges:
        s = reduced(sides, sigma)
        for V in volts:
            ref, _, u2 = reference_current(V, law, sides, sigma)
            assert u2 > 0                                       # the depletion side still depletes
            fast = float(fs.sheet_field_current_density(V, sheet_charge=s, **law))
            assert fast == pytest.approx(ref, rel=2e-5), (sigma, V, fast, ref)
            uncharged = float(fe.field_emission_current_density(V, depletion="exact", **law))
            assert abs(uncharged / ref - 1) > 1e-2, (sigma, V)


SHALLOW_SIDES = dict(n1=1e24, n2=5e23, er1=12.9, er2=11.7, mass=0.2, carrier="electron")
SHALLOW_LAW = dict(barrier_eV=0.3, built_in_V=0.1, alpha=12.9 * 1e24 / (11.7 * 5e23), richardson_A_m2_K2=5e5,
                   temperature_K=T, spike_eV=0.25,
                   field_energy_eV=float(fe.field_energy_eV(doping_m3=5e23, relative_permittivity=11.7,
                                                            mass_ratio=0.2)))


def test_charge_that_flattens_the_depletion_side_matches_the_reference():
    """A shallow n-N spike (SHALLOW_LAW: Vbi 0.1 V; permittivities of GaAs- and Si-like layers,
    dopings 1e18 / 5e17, m* 0.2: law inputs only, the check values are the reference's): an
    attracting charge (+3e12 cm^-2) under forward bias turns the depletion side into an
    accumulation side too (u2 < 0 in the reference: no depletion barrier, the thermionic current
    over the top), a repelling one (-3e12) depletes the accumulation side (u1 < 0). Both against
    the reference at 2e-5."""
    law, sides = SHALLOW_LAW, SHALLOW_SIDES
    seen = set()
    for sigma in (3e12, -3e12):
        s = reduced(sides, sigma)
        for V in (-0.1, 0.05):
            ref, u1, u2 = reference_current(V, law, sides, sigma)
            seen.add("flat" if u2 < 0 else "depleted side 1" if u1 < 0 else "both bent as uncharged")
            fast = float(fs.sheet_field_current_density(V, sheet_charge=s, **law))
            assert fast == pytest.approx(ref, rel=2e-5), (sigma, V, fast, ref)
    assert seen == {"flat", "depleted side 1", "both bent as uncharged"}, seen


def test_zero_charge_is_the_field_emission_law_to_rounding():
    V = np.linspace(-0.5, 0.39, 13)
    j, dj = fs.sheet_field_current_density(V, sheet_charge=0.0, with_derivative=True, **LAW)
    jb, djb = fe.field_emission_current_density(V, depletion="exact", with_derivative=True, **LAW)
    np.testing.assert_allclose(j, jb, rtol=1e-13)
    np.testing.assert_allclose(dj, djb, rtol=1e-13)
    j = np.array([-3e6, -1e3, 10.0, 1e5])
    np.testing.assert_allclose(fs.sheet_field_voltage(j, sheet_charge=0.0, **LAW),
                               fe.field_emission_voltage(j, depletion="exact", **LAW), rtol=1e-11, atol=1e-14)


@pytest.mark.parametrize("s", [-2.0, -0.4, 0.7, 3.0])
def test_without_tunnelling_it_is_the_thermionic_sheet_charge_law(s):
    """No states below the top (spike_eV = 0: G = 1 exactly) gives the thermionic law with the same
    charge (laws/interface_charge.py, itself checked against a Poisson solution in
    tests/test_poisson_reference.py) to rounding; E00 -> 0 approaches it, the gain's excess
    G - 1 shrinking like E00^(2/3) (the WKB exponent's small-depth form (4/3) e^(3/2) / (e00
    sqrt(w)), Padovani-Stratton 1966: the tunnelling window is e ~ (e00 sqrt w)^(2/3))."""
    V = np.linspace(-0.5, 0.39, 9)
    thermionic = {k: v for k, v in LAW.items() if k not in ("field_energy_eV", "spike_eV")}
    jt, djt = te.isotype_current_density(V, sheet_charge=s, depletion="exact", with_derivative=True, **thermionic)
    j, dj = fs.sheet_field_current_density(V, sheet_charge=s, with_derivative=True, **(LAW | dict(spike_eV=0.0)))
    np.testing.assert_allclose(j, jt, rtol=1e-12)
    np.testing.assert_allclose(dj, djt, rtol=1e-12)
    excess = [np.max(np.abs(fs.sheet_field_current_density(V, sheet_charge=s, **(LAW | dict(field_energy_eV=e)))
                            / jt - 1)) for e in (1e-6, 1e-9)]
    assert excess[1] < 1e-4
    assert 1e-3 ** (2 / 3) / 3 < excess[1] / excess[0] < 3 * 1e-3 ** (2 / 3), excess


def test_attracting_charge_lowers_the_spike_and_raises_the_current():
    """n-N: s > 0 (a positive charge) raises the accumulation bending v1, so the top over side 1's
    Fermi level (phi - v1) falls and both directions carry more current at every bias; s < 0
    does the opposite. The tunnelling gain alone moves the other way (a smaller depletion-side
    field w), the thermionic factor wins."""
    V = np.linspace(-0.5, 0.39, 9)
    currents = [np.abs(fs.sheet_field_current_density(V, sheet_charge=s, **LAW)) for s in (-2.0, -0.5, 0.0, 0.5, 2.0)]
    for lower, higher in zip(currents, currents[1:]):
        assert np.all(higher > lower)


def test_the_library_charge_signs_for_holes_and_electrons():
    """Physical signs through reduced_sheet_charge: a negative charge attracts holes, a positive one
    electrons; each raises the current of its interface (p-GaP/p-Si 1e18/1e18, n-GaP/n-Si)."""
    for carrier, n_up, n_low, attract in (("hole", 1e18, 1e18, -1e12), ("electron", 1e17, 1e19, 1e12)):
        law, sides = case(carrier, "GaP", "Si", n_up, n_low)
        j = [float(fs.sheet_field_current_density(-0.1, sheet_charge=reduced(sides, q), **law))
             for q in (-attract, 0.0, attract)]
        assert abs(j[0]) < abs(j[1]) < abs(j[2]), (carrier, j)


@pytest.mark.parametrize("s", [-1.5, 0.8, 4.0])
def test_inverse_returns_the_voltage_and_the_slope_matches_differences(s):
    """V(J(V)) = V to 1e-12 V; J rises strictly; dJ/dV against central differences to 1e-3 (the
    gain's fixed quadrature moves its panels with w, ~4e-4 measured in tests/test_field_emission.py)."""
    V = np.linspace(-0.5, 0.39, 19)
    j, dj = fs.sheet_field_current_density(V, sheet_charge=s, with_derivative=True, **LAW)
    assert np.all(np.diff(j) > 0) and np.all(dj > 0)
    back, dvdj = fs.sheet_field_voltage(j, sheet_charge=s, with_derivative=True, **LAW)
    np.testing.assert_allclose(back, V, atol=1e-12, rtol=0)
    np.testing.assert_allclose(dvdj * dj, 1.0, rtol=1e-9)
    h = 1e-5
    num = (fs.sheet_field_current_density(V + h, sheet_charge=s, **LAW)
           - fs.sheet_field_current_density(V - h, sheet_charge=s, **LAW)) / (2 * h)
    np.testing.assert_allclose(num, dj, rtol=1e-3)
    flat = float(fs.sheet_field_current_density(LAW["built_in_V"], sheet_charge=s, **LAW))
    with np.errstate(all="ignore"):
        assert np.isnan(fs.sheet_field_voltage(2 * abs(flat) + 1.0, sheet_charge=s, **LAW))


def test_slope_range_holds_where_the_charge_flattens_the_depletion_side():
    """Cells of SHALLOW_LAW with +3e12 cm^-2 that reach from a depleted side 2 into a flat one
    (u2 changes sign inside, by the reference's own split) and cells wholly on either part: every
    densely sampled dJ/dV lies in the range."""
    s = reduced(SHALLOW_SIDES, 3e12)
    law = SHALLOW_LAW | dict(sheet_charge=s)
    straddles = 0
    for a, b in ((-0.1, 0.08), (0.0, 0.09), (-0.05, 0.0), (0.03, 0.09), (-0.3, -0.1)):
        ends = [reference_split(v, SHALLOW_LAW, SHALLOW_SIDES, 3e12)[1] for v in (a, b)]
        straddles += ends[0] > 0 > ends[1]
        inside = np.linspace(a, b, 801)
        _, dj = fs.sheet_field_current_density(inside, with_derivative=True, **law)
        low, high = fs.sheet_field_slope_range(a, b, **law)
        assert np.all(dj >= low) and np.all(dj <= high), (a, b, low, high, dj.min(), dj.max())
    assert straddles >= 2


@pytest.mark.parametrize("fermi_eV", [None, 0.05])
def test_slope_range_holds_sampled_slopes_and_shrinks(fermi_eV):
    """Interval arithmetic (R. E. Moore, R. B. Kearfott, M. J. Cloud, Introduction to Interval
    Analysis, SIAM 2009): every dJ/dV sampled densely inside a cell lies in the cell's range (the
    range is proven for the exact gain; this checks the computed one), including cells where the
    charge flattens the depletion side; the range shrinks toward the point slope with the cell
    (linearly: its width is set by the bound on the gain's second derivative times the cell)."""
    rng = np.random.default_rng(1918)
    extra = {} if fermi_eV is None else dict(accumulation_fermi_eV=fermi_eV)
    for _ in range(12):
        law = dict(barrier_eV=rng.uniform(0.2, 0.8), built_in_V=rng.uniform(0.05, 0.4), alpha=10 ** rng.uniform(-1, 1),
                   richardson_A_m2_K2=5e5, temperature_K=T, field_energy_eV=10 ** rng.uniform(-2.5, -1),
                   spike_eV=rng.uniform(0.05, 0.6), sheet_charge=rng.choice([-1, 1]) * 10 ** rng.uniform(-1, 1.5),
                   **extra)
        a, b = np.sort(rng.uniform(-0.6, law["built_in_V"] - 0.01, 2))
        inside = np.linspace(a, b, 201)
        _, dj = fs.sheet_field_current_density(inside, with_derivative=True, **law)
        low, high = fs.sheet_field_slope_range(a, b, **law)
        assert np.all(dj >= low) and np.all(dj <= high), (law, a, b, low, high, dj.min(), dj.max())
        mid = 0.5 * (a + b)
        _, point = fs.sheet_field_current_density(mid, with_derivative=True, **law)
        widths = []
        for half in (1e-6, 1e-8):
            low, high = fs.sheet_field_slope_range(mid - half, mid + half, **law)
            assert low <= point <= high, (law, half, low, point, high)
            widths.append(float(high - low) / abs(float(point)))
        # linear in the cell (the gain-slope bound of laws/field_emission.py is M dw): 100x smaller
        # cell, at least 30x narrower range
        assert widths[1] < 1e-3 and widths[1] < widths[0] / 30, (law, widths)


def test_a_closed_depletion_form_is_refused_with_a_fix():
    with pytest.raises(te.IsotypeParameterError, match='depletion = "exact"'):
        fs.sheet_field_current_density(0.1, sheet_charge=0.5, depletion="tail", **LAW)


# ---------------------------------------------------------------------------------------------
# a layer stack: p-GaP (1e18) on p-Si (1e20) from the library, the key on the GaP layer

PLACEMENTS = Path(__file__).resolve().parents[1] / "stacks" / "demo_placements.toml"
BUFFER = 'name = "buffer"\nmaterial = "GaP"\nthickness_nm = 100\ndoping = "p:1e18"\n'
SILICON_JUNCTION = ('\n[[layer]]\nname = "junction p"\nmaterial = "Si"\nthickness_nm = 20\ndoping = "p:1e20"\n'
                    '\n[[layer]]\nname = "junction n"\nmaterial = "Si"\nthickness_nm = 20\ndoping = "n:1e20"\n')
INTERFACE = "interface buffer / junction p"


def gap_si_stack(folder, sheet_cm2):
    """The placement demo's layers (invented demo data, not check values) with its "in silicon"
    tunnel junction written in, so that the p-GaP buffer meets p-Si; sheet_charge_cm2 on the buffer."""
    text = PLACEMENTS.read_text()
    text = text[:text.index("[[placement]]")]
    assert BUFFER in text
    path = folder / f"gap_si_{sheet_cm2:+.0e}.toml"
    path.write_text(text.replace(BUFFER, BUFFER + f"sheet_charge_cm2 = {sheet_cm2!r}\n" + SILICON_JUNCTION))
    return path


def test_layer_stack_with_a_sheet_charge_runs_through_run_and_interface(tmp_path):
    """`siltandem run --json` and `siltandem interface` on a layer stack whose p-GaP/p-Si interface
    carries -3e12 cm^-2 (attracts holes): thermionic-field transport by default, the numpy law of
    laws/field_emission_sheet.py (no compiled rows), the same drop in both commands, the charge
    printed; against the same stack uncharged and with +3e12 (in-process), the attracting charge
    lowers the drop and the repelling one raises it (Gauss's law: tests above)."""
    import json

    from siltandem import load_stack, run_stack
    from siltandem.circuit.compile import compile_stack
    from test_main_job import cli

    charged = gap_si_stack(tmp_path, -3e12)
    done = cli("run", charged, "--json", "-")
    assert done.returncode == 0, done.stderr
    row = next(r for r in json.loads(done.stdout)["interfaces"] if r["name"] == INTERFACE)
    assert row["transport"] == "thermionic-field" and row["carrier"] == "hole"
    assert row["sheet_charge_reduced"] > 0                       # -3e12 cm^-2 attracts holes
    shown = cli("interface", charged, "--layer", "buffer / junction p", "--points", "3",
                "--plot", tmp_path / "band.png")
    assert shown.returncode == 0, shown.stderr
    assert f"{1000 * row['drop_at_mpp_V']:.2f} mV at the MPP" in shown.stdout
    assert "fixed interface sheet charge: reduced s = +" in shown.stdout and "attracts" in shown.stdout
    assert (tmp_path / "band.png").read_bytes()[:4] == b"\x89PNG"
    element = compile_stack(load_stack(charged)).element(INTERFACE)
    assert element.field_sheet and element.compiled_rows(298.15) is None
    drops = {}
    for sheet in (0.0, 3e12):
        stack = load_stack(gap_si_stack(tmp_path, sheet))
        drops[sheet] = next(r for r in run_stack(stack, curve_points=50).summary["interfaces"]
                            if r["name"] == INTERFACE)["drop_at_mpp_V"]
    uncharged = compile_stack(load_stack(gap_si_stack(tmp_path, 0.0))).element(INTERFACE)
    assert uncharged.compiled_rows(298.15) is not None           # no charge: the compiled law
    assert row["drop_at_mpp_V"] < drops[0.0] < drops[3e12], (row["drop_at_mpp_V"], drops)


def test_numbers_form_takes_the_key_with_thermionic_field_transport(tmp_path):
    """The numbers form (barrier, built-in, the sides' dopings and permittivities, tunnelling mass)
    with transport = "thermionic-field" and sheet_charge_cm2 (refused before this law): the element
    carries s = sigma_c / sqrt(2 eps2 kT N2) computed here from CODATA constants (scipy.constants;
    Gauss's law, Sze & Ng 2007 ch. 3) and its voltage is this law's on its numbers; E00 is
    Padovani-Stratton's (q hbar / 2) sqrt(N / (m* eps)) by hand. Law inputs are invented (0.92 eV,
    0.95 V, p-type 1e19 on both sides), not check values."""
    from scipy import constants

    from siltandem import load_stack
    from siltandem.circuit.compile import compile_stack

    text = ('[conditions]\nspectrum = "am1.5g"\n[[element]]\nkind = "subcell"\nname = "cell"\ngap_eV = 1.4\n'
            '[[element]]\nkind = "isotype"\nname = "i"\nbarrier_eV = 0.92\nbuilt_in_V = 0.95\ncarrier = "hole"\n'
            'accumulation_doping_cm3 = 1e19\ndepletion_doping_cm3 = 1e19\naccumulation_permittivity = 11.7\n'
            'depletion_permittivity = 11.1\ntransport = "thermionic-field"\ntunnelling_mass = 0.2\n'
            'sheet_charge_cm2 = -2e12\n')
    (tmp_path / "n.toml").write_text(text)
    element = compile_stack(load_stack(tmp_path / "n.toml")).element("i")
    t = 298.15
    n2, eps2 = 1e25, 11.1 * constants.epsilon_0
    s = constants.e * 2e12 * 1e4 / math.sqrt(2 * eps2 * constants.k * t * n2)      # holes: -q sigma > 0
    e00 = constants.hbar / 2 * math.sqrt(n2 / (0.2 * constants.m_e * eps2))          # in eV (q cancels)
    assert element.transport == "thermionic-field" and element.field_sheet
    assert float(element.sheet_charge[0, 0]) == pytest.approx(s, rel=1e-12)
    assert float(element.field_energy_eV[0, 0]) == pytest.approx(e00, rel=1e-9)
    assert element.compiled_rows(t) is None
    current = np.array([[-100.0, 20.0, 200.0]])
    volts, _ = element.voltage(current, t)
    law = fs.sheet_field_voltage(element.direction * current, barrier_eV=0.92, built_in_V=0.95,
                                 alpha=11.7 / 11.1, richardson_A_m2_K2=element.richardson_A_m2_K2,
                                 temperature_K=t, field_energy_eV=e00, sheet_charge=s,
                                 spike_eV=element.offset_eV)
    np.testing.assert_allclose(volts, -element.direction * law, rtol=1e-9, atol=1e-13)
