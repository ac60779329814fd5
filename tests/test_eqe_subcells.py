"""Subcells given by their measured external quantum efficiency (eqe = "file.csv")."""
import pytest

from siltandem.constants import HC_EV_NM
from siltandem import StackError, run_stack, load_stack
from siltandem.laws.optics import step_absorber_photocurrents
from siltandem.materials.spectra import get_spectrum


def write_eqe(path, edge_nm, value):
    # a flat EQE up to a sharp edge (two points 1e-6 nm apart)
    rows = [(280.0, value), (edge_nm, value), (edge_nm + 1e-6, 0.0), (4000.0, 0.0)]
    path.write_text("wavelength_nm,eqe\n" + "".join(f"{w!r},{q!r}\n" for w, q in rows))


def test_flat_eqe_equals_a_step_absorber(tmp_path):
    # q integral Phi EQE with EQE = a below the gap wavelength is the step absorber's
    # photocurrent. The EQE is sampled on the spectrum's grid (as pvlib's
    # calc_spectral_mismatch_field does), so the grid interval holding the edge is integrated as
    # a trapezoid from a to 0: up to half a 1 nm step of light, about 0.1 % here; the step
    # absorber integrates exactly up to the edge
    gap = 1.8
    write_eqe(tmp_path / "top.csv", HC_EV_NM / gap, 0.8)
    (tmp_path / "s.toml").write_text(
        '[conditions]\nspectrum = "am1.5g"\n[[element]]\nkind = "subcell"\nname = "top"\n'
        f'gap_eV = {gap}\neqe = "top.csv"\n')
    summary = run_stack(load_stack(tmp_path / "s.toml"), curve_points=30).summary
    spectrum = get_spectrum("am1.5g")
    (step,) = step_absorber_photocurrents([gap], [0.8], spectrum.wavelength_nm,
                                          spectrum.photon_flux)
    assert summary["subcells"][0]["photocurrent_mA_cm2"] == pytest.approx(step / 10, rel=2e-3)
    assert summary["subcells"][0]["photocurrent_mA_cm2"] < step / 10


def test_eqe_file_errors(tmp_path):
    base = '[conditions]\nspectrum = "am1.5g"\n[[element]]\nkind = "subcell"\ngap_eV = 1.8\n'
    (tmp_path / "a.toml").write_text(base + 'eqe = "missing.csv"\n')
    with pytest.raises(StackError, match="quantum-efficiency file not found"):
        load_stack(tmp_path / "a.toml")
    (tmp_path / "pct.csv").write_text("wavelength_nm,eqe\n400,80\n800,85\n")
    (tmp_path / "b.toml").write_text(base + 'eqe = "pct.csv"\n')
    with pytest.raises(StackError, match="looks like percent"):
        load_stack(tmp_path / "b.toml")
    (tmp_path / "c.toml").write_text(base + "eqe = 3\n")
    with pytest.raises(StackError, match="eqe must be a file path"):
        load_stack(tmp_path / "c.toml")


def test_the_eqe_file_is_read_once_at_load(tmp_path, monkeypatch):
    """The table travels with the stack: compiling and solving it again (a study's chunks, a
    cluster's workers) never reads the CSV again, so a worker need not see the file at all.
    (Bookkeeping of our own, no outside source.)"""
    from siltandem.materials import eqe

    write_eqe(tmp_path / "top.csv", 700.0, 0.8)
    (tmp_path / "s.toml").write_text(
        '[conditions]\nspectrum = "am1.5g"\n[[element]]\nkind = "subcell"\nname = "top"\n'
        'gap_eV = 1.8\neqe = "top.csv"\n')
    reads = []
    original = eqe.read_eqe_csv
    monkeypatch.setattr(eqe, "read_eqe_csv", lambda *a, **k: reads.append(a) or original(*a, **k))
    stack = load_stack(tmp_path / "s.toml")
    assert len(reads) == 1
    (tmp_path / "top.csv").unlink()
    first = run_stack(stack, curve_points=30).summary["efficiency_pct"]
    again = run_stack(stack, curve_points=30).summary["efficiency_pct"]
    assert len(reads) == 1 and first == again and first > 0
