"""The interface band diagram puts the upper (sun-side) layer on the left, whichever side
accumulates (issue 20). Checked from the plotted data: left of x = 0 the drawn gap Ec - Ev is the
upper layer's gap, right of it the lower layer's; the library's gaps are read as inputs (the check
is of the drawing's orientation, not of the data). Common practice, no source: the sun side is drawn
on the left, as the stack is listed top to bottom."""
import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402

from siltandem import load_stack  # noqa: E402
from siltandem.circuit.compile import compile_stack  # noqa: E402
from siltandem.materials import load_material  # noqa: E402
from siltandem.studies.interface import plot_interface  # noqa: E402

T = 298.15


STACK = """# INVENTED test data
[stack]
name = "orientation"
[[element]]
kind = "subcell"
name = "top"
gap_eV = 1.75
[[element]]
kind = "isotype"
name = "interface"
upper_material = "{upper}"
lower_material = "{lower}"
upper_doping_cm3 = 1e18
lower_doping_cm3 = 1e17
carrier = "electron"
carriers_flow = "up"
[[element]]
kind = "subcell"
name = "silicon"
gap_eV = 1.12
"""


def interface(tmp_path, upper, lower):
    path = tmp_path / f"{upper}_{lower}.toml"
    path.write_text(STACK.format(upper=upper, lower=lower))
    return next(e for e in compile_stack(load_stack(path)).elements if e.kind == "isotype")


def drawn_gaps(element):
    """(left gaps, right gaps) [eV] from the equilibrium Ec and Ev lines of the plotted figure,
    and the panel's title."""
    fig, axes = plt.subplots(1, 2)
    try:
        plot_interface(element, T, 0.0, axes)
        lines = {line.get_label(): line for line in axes[1].get_lines()}
        x, ec = lines["Ec, equilibrium"].get_data()
        _, ev = lines["Ev, equilibrium"].get_data()
        gap = np.asarray(ec) - np.asarray(ev)
        x = np.asarray(x)
        return gap[x < 0], gap[x > 0], axes[1].get_title()
    finally:
        plt.close(fig)


@pytest.mark.parametrize("upper, lower, accumulates", [("GaP", "Si", "lower"), ("Si", "GaP", "upper")])
def test_upper_layer_is_drawn_on_the_sun_side(tmp_path, upper, lower, accumulates):
    element = interface(tmp_path, upper, lower)
    # both orientations of the accumulation layer are exercised (electrons gather in Si)
    assert element.sides["accumulation"]["layer"] == accumulates
    left, right, title = drawn_gaps(element)
    assert np.allclose(left, float(load_material(upper).gap_eV(T)), atol=1e-12)
    assert np.allclose(right, float(load_material(lower).gap_eV(T)), atol=1e-12)
    assert title.index(f"upper {upper}") < title.index(f"lower {lower}")
