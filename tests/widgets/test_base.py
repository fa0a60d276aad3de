"""BaseWidget machinery: stale computations are dropped, errors become messages, exports."""

from __future__ import annotations

import html
import io
import json
import threading
from datetime import date

import ipywidgets as widgets
import numpy as np
import pandas as pd
import pytest

from climwidgets.compute.totals import annual_totals
from climwidgets.errors import ParameterError
from climwidgets.widgets.base import BaseWidget, unique_path

from ._data import monthly_pr


class _Totals(BaseWidget):
    """A minimal widget: mean annual total for a chosen year start."""

    title = "test <widget>"

    def __init__(self, pr, gate=None, **kwargs):
        self.pr = pr
        self.gate = gate
        self.year_start = widgets.IntSlider(value=1, min=1, max=13)
        self.rendered = []
        super().__init__(**kwargs)
        self.watch(self.year_start)
        self.refresh()

    def build_controls(self):
        return [self.year_start]

    def parameters(self):
        return {"year_start": self.year_start.value}

    def compute(self, year_start):
        if self.gate is not None and year_start == 2:
            self.gate.wait(10)  # hold this (soon stale) computation until a newer one finished
        return annual_totals(self.pr, year_start=year_start).mean("year")

    def render(self, result, params):
        self.rendered.append(params["year_start"])
        self.show_table(result.to_dataframe(name="mean").head(3))


def test_result_matches_the_compute_function_and_dask_is_computed():
    pr = monthly_pr(dask=True)
    w = _Totals(pr)
    result = w.wait()
    expected = annual_totals(pr, year_start=1).mean("year").compute()
    assert result.chunks is None
    assert (result == expected).all()
    assert w.table is not None and "<h3" in w.children[0].value and "&lt;widget&gt;" in w.children[0].value


def test_a_stale_computation_is_discarded():
    gate = threading.Event()
    w = _Totals(monthly_pr(), gate=gate)
    w.wait()
    w.year_start.value = 2  # blocks in compute until released
    w.year_start.value = 3  # supersedes it
    w.wait()
    gate.set()
    import time

    for _ in range(100):  # let the stale thread run to its end
        if not any(t.name.endswith("-2") for t in threading.enumerate()):
            break
        time.sleep(0.05)
    assert w.rendered[-1] == 3 and 2 not in w.rendered
    assert w.result.equals(annual_totals(w.pr, year_start=3).mean("year"))


def test_bad_parameter_is_a_message_not_a_traceback():
    w = _Totals(monthly_pr())
    w.wait()
    w.year_start.value = 13
    w.wait()
    assert isinstance(w.error, ParameterError)
    assert "year_start" in w.message.value and "Traceback" not in w.message.value
    w.year_start.value = 10
    w.wait()
    assert w.error is None and w.message.value == ""


class _Checked(_Totals):
    """Refuses year_start 12 in its controls (a parameter error, before any computation)."""

    def parameters(self):
        if self.year_start.value == 12:
            raise ParameterError(
                "year_start 12 is refused here", source="test", variable="year_start", fix="choose another month"
            )
        return super().parameters()


def test_an_error_marks_the_shown_results_and_an_older_computation_cannot_clear_it():
    import time

    gate = threading.Event()
    w = _Checked(monthly_pr(), gate=gate)
    w.wait()
    before = w.result
    assert not w.stale and w.message in w.controls.children  # errors appear beside the controls
    w.year_start.value = 2  # blocks in compute until released
    w.year_start.value = 12  # refused by the controls while 2 still runs
    assert isinstance(w.error, ParameterError) and w.stale
    assert "cw-stale" in w.table_html._dom_classes and "previous settings" in w.stale_note.value
    assert all(b.disabled for b in w.exports.children)  # old numbers cannot be exported as new
    gate.set()
    for _ in range(100):  # let the older computation run to its end
        if not any(t.name.endswith("-2") for t in threading.enumerate()):
            break
        time.sleep(0.05)
    w.kernel.drain()
    assert isinstance(w.error, ParameterError) and w.stale and w.result is before and 2 not in w.rendered
    w.year_start.value = 3
    w.wait()
    assert w.error is None and not w.stale and w.rendered[-1] == 3
    assert "cw-stale" not in w.table_html._dom_classes and not any(b.disabled for b in w.exports.children)


def test_compute_now_runs_in_the_calling_thread():
    w = _Totals(monthly_pr())
    w.year_start.value = 10
    assert w.compute_now().equals(annual_totals(w.pr, year_start=10).mean("year"))


def test_csv_export_is_written_and_never_overwrites(tmp_path):
    w = _Totals(monthly_pr(), export_dir=tmp_path)
    w.wait()
    csv_button = w.exports.children[0]
    csv_button.click()
    csv_button.click()
    day = date.today().strftime("%Y%m%d")
    name = f"climwidgets_{day}.csv"
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(
        [name, name + "-metadata.json", f"climwidgets_{day}-2.csv", f"climwidgets_{day}-2.csv-metadata.json"]
    )
    assert "to download" in w.message.value and str(tmp_path) in w.message.value
    assert unique_path(tmp_path, name).name == f"climwidgets_{day}-3.csv"


def _links(w):
    """{file name: bytes} of the download links the widget shows."""
    import base64
    import re

    found = re.findall(r"download='([^']+)' href='data:[^;]+;base64,([^']*)'", w.downloads.value)
    return {html.unescape(n): base64.b64decode(b) for n, b in found}


def test_csv_download_link_holds_the_table_and_its_settings(tmp_path):
    w = _Totals(monthly_pr(), export_dir=tmp_path)
    w.year_start.value = 10
    w.wait()
    w.save_copies = False
    w.exports.children[0].click()
    links = _links(w)
    name = f"climwidgets_{date.today().strftime('%Y%m%d')}.csv"
    assert list(links) == [name, name + "-metadata.json"] and list(tmp_path.iterdir()) == []
    back = pd.read_csv(io.BytesIO(links[name]), index_col=[0, 1])  # a plain pandas read
    np.testing.assert_allclose(back.to_numpy(dtype=float), w.table.to_numpy(dtype=float), rtol=1e-12)
    meta = json.loads(links[name + "-metadata.json"])
    assert meta["parameters"]["year_start"] == 10 and meta["url"] == name


def test_export_before_any_result_is_a_message(tmp_path):
    w = BaseWidget(export_dir=tmp_path)
    w.exports.children[0].click()
    assert "no table to export" in w.message.value and w.downloads.value == ""
    with pytest.raises(NotImplementedError):
        w.compute()


def test_units_menu_shows_the_table_in_us_customary_without_computing():
    """Every widget has the Units menu; a change redraws the shown table (1 in = 25.4 mm,
    international yard and pound agreement 1959, from memory) and computes nothing."""
    from climwidgets.analyses.meta import display_frame

    class _Described(_Totals):
        def render(self, result, params):
            self.rendered.append(params["year_start"])
            table = pd.DataFrame(
                {"annual_mean_mm": [254.0, 508.0], "seasonal_share_1": [0.25, 0.5]},
                index=pd.Index(["a", "b"], name="basin"),
            )
            self.show_table(display_frame(table))

    w = _Described(monthly_pr())
    w.wait()
    assert w.units in w.controls.children and w.units.value == "SI"
    w.units.value = "US"
    assert w.rendered == [1]  # not rendered (nor computed) again
    assert list(w.table["mean annual total [in]"]) == pytest.approx([10.0, 20.0])
    assert list(w.table["seasonal share [%]"]) == [25.0, 50.0]
    assert "[in]" in w.table_html.value and "us-units" in w.export_name(None, "csv")
    assert w.csv_provenance()["parameters"]["units"].startswith("US customary")
    w.units.value = "SI"
    assert list(w.table["mean annual total [mm]"]) == [254.0, 508.0]
