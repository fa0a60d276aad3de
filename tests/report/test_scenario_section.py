"""The report's scenario section (climwidgets/report/scenario_section.py)."""

import xarray as xr

from climwidgets.compute.scenario import SCENARIO_CAUTIONS
from climwidgets.report.scenario_section import scenario_section


def _signals():
    from climwidgets.analyses.meta import describe, ensemble_attrs

    share = describe(
        xr.DataArray([[0.01, 0.03]], dims=("basin", "member"), coords={"basin": ["north <b>"], "member": ["a", "b"]}),
        "share_change_1",
    )
    ds = xr.Dataset({"share_change_1": share})
    ds["share_change_1_mean"] = share.mean("member").assign_attrs(ensemble_attrs(share.attrs, "mean"))
    ds.attrs = {
        "member_dim": "member",
        "cautions": list(SCENARIO_CAUTIONS),
        "historical_period": [1981, 2010],
        "future_period": [2041, 2070],
        "months": [7, 8],
    }
    return ds


def test_cautions_come_before_the_numbers_and_text_is_escaped():
    page = scenario_section(_signals())
    first_number = page.index("+2.0")  # 0.02 shown in % points with a sign (meta.CATALOGUE format)
    for caution in SCENARIO_CAUTIONS:
        assert page.index(caution.split(":")[0][:30]) < first_number
    assert "north &lt;b&gt;" in page and "north <b>" not in page
    assert "1981–2010" in page and "2041–2070" in page
    assert "Change in seasonal share, ensemble mean" in page


def test_report_page_has_cautions_inputs_and_parameters(tmp_path):
    from climwidgets.report.scenario_section import write_scenario_report

    src = tmp_path / "hist.nc"
    src.write_bytes(b"not really netcdf")
    path = write_scenario_report(
        _signals(), tmp_path / "scenario_report.html", inputs=[src], parameters={"season": "Jul-Aug", "method": "none"}
    )
    page = path.read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>") and "<script" not in page
    assert page.index(SCENARIO_CAUTIONS[0][:30]) < page.index("+2.0")
    # the input with its SHA-256 (hashlib.sha256 of the bytes written above)
    import hashlib

    assert "hist.nc" in page and hashlib.sha256(b"not really netcdf").hexdigest() in page
    assert "Jul-Aug" in page and "method" in page
    import pytest

    from climwidgets.atomic import OutputExistsError

    with pytest.raises(OutputExistsError):
        write_scenario_report(_signals(), path)
