"""siltandem: light I-V, efficiency and per-interface losses of multi-junction solar cells on silicon.

Pipeline (one way, left to right): load a stack file -> compile to a circuit -> optics (photocurrents)
-> series solve -> result; studies on top. See DEVELOPERS.md.

The public API, loaded on first use (``import siltandem`` imports neither numpy nor the solver)::

    import siltandem

    stack = siltandem.load_stack("stacks/demo_dual.toml")
    result = siltandem.run_stack(stack, suns=10)          # a siltandem.Result
    result.summary["efficiency_pct"]; result.iv; result.to_dataframe()
    siltandem.plot_iv(result)
    result.spectral_table(); siltandem.plot_spectral(result)   # layer stacks: per wavelength

Studies: ``design_map``, ``match_currents`` (with ``parse_vary`` to name what varies),
``rank_placements``, ``loss_waterfall``, ``annual_yield`` (with ``read_weather``: TMY3, TMY2, EPW
files or a pandas DataFrame). A ``spectrum=`` argument takes a name, a CSV path or a pandas Series
indexed by wavelength in nm (pvlib's own spectra). Bad input raises
``siltandem.StackError`` (a ValueError with ``file``, ``where``, ``problem`` and ``fix``). What a
result's ``warnings`` list holds is also issued as a ``siltandem.ModelWarning`` (a UserWarning).
"""
from importlib import import_module

from siltandem.version import __version__

#: public name -> the module that defines it
_API = {
    "load_stack": "siltandem.stack.load",
    "run_stack": "siltandem.result.driver",
    "Result": "siltandem.result.record",
    "StackError": "siltandem.errors",
    "ModelWarning": "siltandem.errors",
    "parse_vary": "siltandem.studies.sweep",
    "design_map": "siltandem.studies.maps",
    "match_currents": "siltandem.studies.matching",
    "rank_placements": "siltandem.studies.placements",
    "loss_waterfall": "siltandem.studies.losses",
    "concentration_series": "siltandem.studies.concentration",
    "annual_yield": "siltandem.studies.yield_year",
    "read_weather": "siltandem.materials.weather",
    "plot_iv": "siltandem.report.plots",
    "plot_spectral": "siltandem.report.plots",
}

__all__ = ["__version__", *_API]


def __getattr__(name):
    if name not in _API:
        raise AttributeError(f"module 'siltandem' has no attribute {name!r}")
    value = getattr(import_module(_API[name]), name)
    globals()[name] = value          # later lookups skip this function
    return value


def __dir__():
    return sorted(set(globals()) | set(_API))
