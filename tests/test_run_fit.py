"""Running a case with a fit: block: the run fits the well, stores the fit, shows and plots it."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import anharmony as ah
from anharmony import plots
from anharmony.cases import load_case
from anharmony.cli import main
from anharmony.store import read_dataset
from test_cases_fit import FIT, HEAD, TOL_FIT, TRUE_FREQUENCY

CASES = Path(__file__).resolve().parents[1] / "cases"

# The harmonic fit of test_cases_fit: E_n = ħω (n + ½) exactly (Griffiths, Introduction to
# Quantum Mechanics, §2.3), data of ħω = 1.3, start 1.0.
CASE = HEAD + FIT + "output: fit.nc\n"


@pytest.fixture(scope="module")
def ran(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fit")
    (folder / "c.yaml").write_text(CASE)
    assert main(["run", str(folder / "c.yaml")]) == 0
    return folder, read_dataset(folder / "fit.nc")


def test_a_fit_case_is_never_run_without_its_fit(ran):
    # regression: the run once ignored the fit: block and wrote the starting well's levels
    # (ħω = 1.0). The stored levels are those of the fitted well, E_n = ħω (n + ½) with
    # ħω = 1.3 (Griffiths §2.3).
    _, ds = ran
    assert "fit_value" in ds
    assert float(ds.fit_value.sel(fit_parameter="well[0].frequency")) == pytest.approx(
        TRUE_FREQUENCY, abs=TOL_FIT)
    expected = TRUE_FREQUENCY * (np.arange(3) + 0.5)
    np.testing.assert_allclose(ds.energy.values[0, 0], expected, atol=1e-6)  # 20 states, exact
    # up to the fit's tolerance on ħω, times n + ½ ≤ 2.5


def test_the_result_holds_what_a_direct_fit_call_gives(ran, tmp_path):
    folder, ds = ran
    res = ah.fit(**load_case(folder / "c.yaml").fit_arguments())
    np.testing.assert_array_equal(ds.fit_value.values, [res.values[p] for p in res.parameters])
    np.testing.assert_array_equal(ds.fit_uncertainty.values,
                                  [res.uncertainties[p] for p in res.parameters])
    np.testing.assert_array_equal(ds.fit_residual.values, res.residuals)
    np.testing.assert_array_equal(ds.fit_prediction.values, res.predictions)
    np.testing.assert_array_equal(ds.fit_correlation.values, res.correlation)
    assert float(ds.attrs["fit_chi2"]) == res.chi2 and int(ds.attrs["fit_dof"]) == res.dof
    assert list(ds.fit_datum.values) == ["data[0]", "data[1]", "data[2]"]
    np.testing.assert_array_equal(ds.fit_measured.values, [0.65, 1.95, 2.6])
    # CF §3.1: units on every variable; oscillator units are "1" throughout
    assert ds.fit_residual.attrs["units"] == "1"
    assert ds.fit_value.attrs["units"] == "1" and ds.fit_measured.attrs["units"] == "1"
    assert list(ds.fit_parameter_units.values) == ["1"]
    assert ds.fit_correlation.dims == ("fit_parameter", "fit_parameter_b")


def test_a_run_fit_result_round_trips_identically(ran, tmp_path):
    from anharmony.runner import run_case
    from anharmony.store import write_dataset

    folder, _ = ran
    ds = run_case(folder / "c.yaml")
    write_dataset(ds, tmp_path / "again.nc")
    xr.testing.assert_identical(ds, read_dataset(tmp_path / "again.nc"))


def test_mixed_parameter_units_are_named_per_parameter(tmp_path):
    # the trap demo fits a depth (h·kHz) and a waist (µm): no one CF units attribute fits both
    from anharmony.runner import run_case

    ds = run_case(CASES / "trap-fit.yaml")
    assert list(ds.fit_parameter_units.values) == ["kHz", "um"]
    assert "units" not in ds.fit_value.attrs
    assert "fit_parameter_units" in ds.fit_value.attrs["long_name"]
    assert ds.fit_measured.attrs["units"] == "kHz"


def test_show_prints_the_fit_table(ran, capsys):
    folder, ds = ran
    assert main(["show", str(folder / "fit.nc")]) == 0
    out = capsys.readouterr().out
    assert "fit of the well" in out
    line = next(x for x in out.splitlines() if x.strip().startswith("well[0].frequency"))
    assert float(line.split()[1]) == pytest.approx(TRUE_FREQUENCY, abs=TOL_FIT)
    assert f"dof = {int(ds.attrs['fit_dof'])}" in out
    for name, r in zip(ds.fit_datum.values, ds.fit_residual.values, strict=True):
        row = next(x for x in out.splitlines() if x.strip().startswith(str(name)))
        assert f"{float(r):+8.2f}σ" in row


def test_check_prints_one_line_for_the_fit(ran, capsys):
    folder, _ = ran
    assert main(["check", str(folder / "c.yaml")]) == 0
    lines = [x for x in capsys.readouterr().out.splitlines() if x.strip().startswith("fit ")]
    assert len(lines) == 1
    assert "well[0].frequency" in lines[0] and "3 data" in lines[0]


def test_the_residuals_figure_is_written_and_plots_the_residuals(ran, tmp_path):
    folder, ds = ran
    fig = plots.make_figure(ds, "residuals")
    (line,) = [x for x in fig.axes[0].lines if x.get_gid() == "residual"]
    np.testing.assert_array_equal(line.get_ydata(), ds.fit_residual.values)
    assert main(["plot", str(folder / "fit.nc"), "--kind", "residuals", "-o",
                 str(tmp_path / "r.png")]) == 0
    assert (tmp_path / "r.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG spec


def test_the_residuals_figure_of_a_result_without_a_fit_names_what_is_missing(tmp_path):
    (tmp_path / "c.yaml").write_text(CASE[:CASE.index("fit:")] + "output: nofit.nc\n")
    assert main(["run", str(tmp_path / "c.yaml")]) == 0
    with pytest.raises(ValueError, match=r"fit_residual.*fit: block"):
        plots.make_figure(read_dataset(tmp_path / "nofit.nc"), "residuals")



def test_radius_and_energy_data_keep_their_own_units_in_the_file(tmp_path):
    # A nuclear-units fit to an energy and an rms radius: the file cannot give fit_measured one
    # CF units attribute (MeV and fm), so each datum's unit is stored (CF §3.1: a units
    # attribute must be right when it is there). Harmonic oscillator: E = ħω(2n + l + 3/2),
    # ⟨r²⟩ = b²(2n + l + 3/2) (Messiah).
    import math

    from anharmony.units import get_units

    u = get_units("nuclear")
    hw = 10.0
    b2 = 2.0 * u.hbar2_over_2m(None) / hw
    case = (f"schema: 1\nunits: nuclear\nspace: {{dimension: 3, l: [0]}}\n"
            f"well:\n  - harmonic: {{frequency: 8.0}}\nbasis: {{size: 20}}\n"
            f"levels: {{count: 2}}\nreference: {{frequency: 10.0}}\n"
            f"fit:\n  parameters:\n    well[0].frequency: null\n  data:\n"
            f"    - {{level: 0, value: {1.5 * hw}, uncertainty: 1.0e-6}}\n"
            f"    - {{quantity: rms_radius, level: 0, value: {math.sqrt(1.5 * b2)}, "
            f"uncertainty: 1.0e-6}}\noutput: r.nc\n")
    (tmp_path / "r.yaml").write_text(case)
    assert main(["run", str(tmp_path / "r.yaml")]) == 0
    ds = read_dataset(tmp_path / "r.nc")
    assert list(ds.fit_datum_units.values) == ["MeV", "fm"]
    assert "units" not in ds.fit_measured.attrs
    assert float(ds.fit_value[0]) == pytest.approx(hw, rel=1e-8)  # exact data
