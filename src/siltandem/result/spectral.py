"""The spectral view of a layer stack: where the photons of each wavelength go.

The optics stage (``optics.layers.illuminate_layers``) keeps the per-wavelength arrays of its one
pass in ``circuit.optics["layer_light"]``: the coated front's reflectance and each coating's
absorptance (characteristic matrices, ``laws.thinfilm.coating_response``), the photon budget of
the thick layers (``laws.thinfilm.layer_absorption``: every pass, scattered light included) and
each subcell's collected current per nm (``laws.collection.collected_photocurrent``). This module
divides them by the incident photon flux; nothing is solved again. Per wavelength:

- ``reflectance``: all light that leaves through the front, as an integrating sphere measures it:
  reflected at the (coated) front surface, plus light that entered and came back out (returned by
  the back reflector, or scattered out of the escape cone);
- ``transmittance``: light that reaches the back and is not returned (it leaves through the back
  or is lost in the back reflector);
- ``<layer>.absorptance``: absorbed in that layer, all passes; coatings are labelled
  ``coating <name>``, as in the summary's ``parasitic`` list; in a subcell's layer with
  free-carrier absorption (doped Si) that part is its own column, ``<layer> free
  carriers.absorptance`` (parasitic: it makes no pair), and ``<layer>.absorptance`` is the rest;
- ``<subcell>.eqe``: collected electrons per incident photon (external quantum efficiency).

reflectance + transmittance + the sum of the absorptances = 1 at every wavelength (the photon
budget closes to rounding); a subcell's EQE is at most the absorptance of its emitter and base.

Where the spectrum has no photons (ASTM G173 global has six zeros between 2670 and 2760 nm), the
fractions cannot be read off the pass; there the optics is run once more for a unit flux, only at
those wavelengths (the optics is linear in the flux).

:func:`spectral_bands` gives the same budget integrated over the spectrum, one band per area of the
spectral figure (``report.plots.plot_spectral``): each subcell's collected current, each subcell's
absorbed but not collected current, each parasitic layer's absorbed current, the transmitted and
the reflected current. The bands add up to the incident photon current.
"""
import numpy as np

from siltandem import units
from siltandem.constants import ELEMENTARY_CHARGE_C
from siltandem.errors import StackError
from siltandem.optics.layers import absorber_labels, subcell_layers


def _first(value):
    """The first design's value of an optics or element number, as a float (record.first_value;
    not imported from there, which imports this module)."""
    return float(np.asarray(value, dtype=float).reshape(-1)[0])


def _row(array, size):
    """The first design's row of an optics array, as a fresh (size,) float array."""
    array = np.asarray(array, dtype=float)
    array = np.broadcast_to(array, np.broadcast_shapes(array.shape, (size,)))
    return np.array(array.reshape(-1, size)[0])


def _fractions(model, light, flux):
    """Fractions of the incident photons per wavelength, from one optics pass ``light`` made under
    ``flux`` (M,) [any unit, > 0]: an ordered dict column -> (M,) array."""
    size = flux.size
    budget = light.budget
    columns = {"reflectance": _row(light.reflectance, size) + _row(budget.escaped, size) / flux,
               "transmittance": _row(budget.transmitted, size) / flux}
    if model.shading_fraction > 0:       # [device] shading_fraction: the front under the grid
        columns["grid_shading"] = np.full(size, float(model.shading_fraction))
    labels = absorber_labels(model)
    count = len(model.coatings)
    for k, label in enumerate(labels[:count]):
        columns[f"{label}.absorptance"] = _row(light.coating_absorbed[k], size)
    share = light.free_carrier_share
    split = subcell_layers(model) if share is not None else set()
    for j, label in enumerate(labels[count:]):
        absorbed = _row(budget.absorbed[j], size) / flux
        if j in split and np.any(share[j] > 0):
            free = absorbed * _row(share[j], size)
            columns[f"{label}.absorptance"] = absorbed - free
            columns[f"{label} free carriers.absorptance"] = free
        else:
            columns[f"{label}.absorptance"] = absorbed
    for cell, collected in zip(model.subcells, light.collected):
        columns[f"{cell.name}.eqe"] = _row(collected.collected_A_m2, size) / (
            ELEMENTARY_CHARGE_C * flux)
    return columns


def _layer_model(circuit, what):
    model = circuit.model
    if model is None:
        raise StackError(f"the {what} needs a layer stack: an element stack has no layer optics "
                         "(no reflectance, transmittance or absorption per layer)",
                         where=what, fix="describe the stack by its [[layer]] tables to get it")
    return model


def spectral_columns(circuit):
    """The spectral table of a lit layer-stack circuit as (wavelength_nm, {column: array}).

    Columns in order: ``reflectance``, ``transmittance``, one ``<layer>.absorptance`` per coating
    and layer (sun side first), one ``<subcell>.eqe`` per subcell (optical order); all fractions
    of the incident photons [-]. Raises StackError for an element stack.
    """
    from siltandem.optics.layers import layer_light

    model = _layer_model(circuit, "spectral table")
    spectrum = circuit.optics["spectrum"]
    wavelength = np.asarray(spectrum.wavelength_nm, dtype=float)
    flux = np.asarray(spectrum.photon_flux, dtype=float)
    dark = ~(flux > 0)
    columns = _fractions(model, circuit.optics["layer_light"], np.where(dark, 1.0, flux))
    if dark.any():
        ones = np.ones(int(dark.sum()))
        unit = _fractions(model, layer_light(model, wavelength[dark], ones), ones)
        for key, values in columns.items():
            values[dark] = unit[key]
    return wavelength, columns


def spectral_table(circuit):
    """The spectral table (pandas DataFrame): ``wavelength_nm`` then the columns of
    :func:`spectral_columns`."""
    import pandas as pd

    wavelength, columns = spectral_columns(circuit)
    return pd.DataFrame({"wavelength_nm": wavelength, **columns})


def spectral_bands(circuit):
    """The photon budget integrated over the spectrum, one band per area of the spectral figure.

    A list of ``{band, kind, current_mA_cm2, share_pct}`` (share of the incident photon current),
    in this order: each subcell's collected current (kind ``collected``, its photocurrent), each
    subcell's absorbed but not collected current (``not collected``), each parasitic coating and
    layer (``parasitic``, as in the summary's ``parasitic`` list), ``transmitted``, ``reflected``
    (with ``escaped_mA_cm2``: the part that had entered and came back out through the front).
    The currents add up to the incident photon current (to the budget's error).
    """
    _layer_model(circuit, "spectral bands")
    optics = circuit.optics
    incident = float(optics["incident_A_m2"])
    bands = []

    def add(band, kind, current_A_m2, **extra):
        current = float(current_A_m2)
        bands.append({"band": band, "kind": kind, "current_mA_cm2": units.ma_cm2(current),
                      "share_pct": 100 * current / incident if incident > 0 else float("nan"),
                      **extra})

    for cell in circuit.subcells:
        add(cell.name, "collected", _first(cell.photocurrent_A_m2))
    for cell in circuit.subcells:
        add(f"{cell.name} not collected", "not collected",
            _first(optics["absorbed_A_m2"][cell.name]) - _first(cell.photocurrent_A_m2))
    for name, current in optics["parasitic_A_m2"].items():
        add(name, "parasitic", current)
    add("transmitted", "transmitted", _first(optics["transmitted_A_m2"]))
    add("reflected", "reflected", optics["reflected_A_m2"],
        escaped_mA_cm2=units.ma_cm2(float(optics["escaped_A_m2"])))
    return bands
