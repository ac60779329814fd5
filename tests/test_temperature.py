"""Temperature dependence: gaps through Varshni, Voc against the published temperature law."""
import pytest

from siltandem.constants import BOLTZMANN_EV_K
from siltandem.materials import load_material
from siltandem import run_stack
from siltandem.stack.load import parse_stack


def cell_stack(material, ere, temperature_K):
    return parse_stack({"conditions": {"temperature_K": temperature_K},
                        "element": [{"kind": "subcell", "name": "cell", "material": material,
                                     "ere": ere}]})


def test_gap_follows_varshni():
    # Varshni, Physica 34 (1967) 149, with the GaAs parameters of Vurgaftman, Meyer,
    # Ram-Mohan, J. Appl. Phys. 89 (2001) 5815: Eg(T) = 1.519 - 5.405e-4 T^2 / (T + 204)
    for temperature in (250.0, 298.15, 350.0):
        summary = run_stack(cell_stack("GaAs", 1e-3, temperature), curve_points=30).summary
        expected = 1.519 - 5.405e-4 * temperature**2 / (temperature + 204.0)
        assert summary["subcells"][0]["gap_eV"] == pytest.approx(expected, abs=2e-4)


@pytest.mark.parametrize("material, ere", [("Si", 2e-3), ("GaAs", 1e-2)])
def test_voc_temperature_coefficient_follows_green_2003(material, ere):
    # M. A. Green, Prog. Photovolt. 11 (2003) 333 (from memory): with Jsc nearly constant,
    # dVoc/dT = -(Eg0/q - Voc + gamma kT/q) / T, Eg0 the gap extrapolated linearly to 0 K and
    # gamma the temperature exponent of J0's prefactor (J0 = C T^gamma exp(-Eg0/kT)). For the
    # radiative J0 of the generalized Planck law, J0 ~ T^3 (Eg/kT)^2 exp(-Eg/kT) to leading
    # order, so gamma = 1. The closed form leaves out the small rise of Jsc as the gap shrinks
    # and the higher terms of the Planck integral: 5 % tolerance.
    t1, t2 = 293.15, 303.15
    voc1 = run_stack(cell_stack(material, ere, t1), curve_points=30).summary["voc_V"]
    voc2 = run_stack(cell_stack(material, ere, t2), curve_points=30).summary["voc_V"]
    slope = (voc2 - voc1) / (t2 - t1)
    t = 0.5 * (t1 + t2)
    law = load_material(material)
    h = 0.01
    dgap = (float(law.gap_eV(t + h)) - float(law.gap_eV(t - h))) / (2 * h)
    gap0 = float(law.gap_eV(t)) - t * dgap
    voc = 0.5 * (voc1 + voc2)
    green = -(gap0 - voc + 1 * BOLTZMANN_EV_K * t) / t
    assert slope == pytest.approx(green, rel=0.05)
    # measured cells lose about 2 mV/K of Voc (from memory: -1.8 to -2.4 mV/K for silicon and
    # gallium arsenide cells at their usual Voc); a loose consistency bound
    assert -2.6e-3 < slope < -1.4e-3


def test_temperature_coefficient_of_efficiency_is_negative():
    etas = [run_stack(cell_stack("Si", 2e-3, t), curve_points=30).summary["efficiency_pct"]
            for t in (288.15, 298.15, 308.15)]
    assert etas[0] > etas[1] > etas[2]
    relative = (etas[2] - etas[0]) / 20.0 / etas[1]
    # silicon cells: about -0.3 to -0.5 %/K relative (from memory)
    assert -0.006 < relative < -0.002
