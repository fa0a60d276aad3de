"""Rendering happens on the kernel's thread: a burst of parameter changes ends with the screen
of the last parameters, and no widget or figure state is ever set from a worker thread."""

from __future__ import annotations

import threading

import ipywidgets
import pytest

from climwidgets.compute.seasonal import seasonal_fraction
from climwidgets.widgets.base import KernelThread
from climwidgets.widgets.mapframe import MapFrame
from climwidgets.widgets.seasonal import SeasonalShareWidget
from climwidgets.widgets.summary import BasinSummaryWidget

from ._data import basins, monthly_pr


@pytest.fixture
def off_thread(monkeypatch):
    """Every widget trait change and figure update made off the main thread, recorded."""
    main = threading.get_ident()
    seen = []
    notify = ipywidgets.Widget.notify_change

    def recording_notify(self, change):
        if threading.get_ident() != main:
            seen.append(f"{type(self).__name__}.{change['name']}")
        return notify(self, change)

    monkeypatch.setattr(ipywidgets.Widget, "notify_change", recording_notify)
    for name in ("show_field", "set_basins", "set_overlay", "zoom_to", "redraw"):
        original = getattr(MapFrame, name)

        def recording(self, *args, _original=original, _name=name, **kwargs):
            if threading.get_ident() != main:
                seen.append(f"MapFrame.{_name}")
            return _original(self, *args, **kwargs)

        monkeypatch.setattr(MapFrame, name, recording)
    return seen


def test_fifty_rapid_changes_end_on_the_last_parameters(off_thread, tmp_path):
    pr = monthly_pr(dask=True)
    w = SeasonalShareWidget(pr, basins(), export_dir=tmp_path)
    firsts = [((k * 5) % 12) + 1 for k in range(50)]
    for k, first in enumerate(firsts):  # no wait in between: each change supersedes the last
        w.first.value = first
        w.last.value = (first % 12) + 1  # two-month seasons
        if k % 7 == 0:
            w.how.value = "mean_of_ratios" if w.how.value == "ratio_of_sums" else "ratio_of_sums"
    w.wait()
    assert w.error is None, w.message.value
    months = (firsts[-1], firsts[-1] % 12 + 1)
    how = w.how.value
    expected = seasonal_fraction(pr, months=months, how=how)
    assert w.result.attrs["season_months"] == list(months) and w.result.attrs["how"] == how
    from climwidgets.compute._time import MONTH_NAMES

    label = f"{MONTH_NAMES[months[0] - 1]}–{MONTH_NAMES[months[1] - 1]}"
    assert label in w.map.ax.get_title()  # the screen shows the last parameters
    for b in w.basins:
        from climwidgets.geo.aggregate import basin_mean

        one = float(seasonal_fraction(basin_mean(pr, b), months=months, how=how))
        assert w.table.loc[b.name, "seasonal share [%]"] == pytest.approx(100 * one, rel=1e-9)
    assert float(abs(w.result["share"] - expected).max()) < 1e-9
    assert off_thread == []


def test_summary_widget_renders_on_the_kernel_thread(off_thread, tmp_path):
    w = BasinSummaryWidget(monthly_pr(dask=True), basins(), baseline=(2001, 2010), export_dir=tmp_path)
    for p in range(10, 30):
        w.percent.value = float(p)
    w.wait()
    assert w.error is None, w.message.value
    assert float(w.result["scenario"]["percent"].iloc[0]) == 29.0
    assert off_thread == []


def test_kernel_thread_queues_calls_from_workers_until_drained():
    kernel = KernelThread()
    ran = []
    worker = threading.Thread(target=lambda: kernel.call(lambda: ran.append(threading.get_ident())))
    worker.start()
    worker.join()
    assert ran == []  # no kernel loop here: queued for the owner thread
    kernel.drain()
    assert ran == [threading.get_ident()]
