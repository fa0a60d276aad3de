"""report/_figures.py: off-screen figures of the HTML report, embedded as PNG data URIs."""

import base64

import numpy as np
import pandas as pd
import pytest
import xarray as xr

from climwidgets.geo.basin import Basin
from climwidgets.report import _figures as figs


def test_plain_label_escapes_mathtext():
    assert figs.plain_label("cost $5") == r"cost \$5"


def test_png_data_uri_is_a_png():
    from matplotlib.figure import Figure

    fig = Figure(figsize=(1, 1))
    fig.add_subplot(1, 1, 1).plot([0, 1], [0, 1])
    uri = figs.png_data_uri(fig, dpi=50)
    assert uri.startswith("data:image/png;base64,")
    # Outside reference: the PNG signature (ISO/IEC 15948, section 5.2).
    assert base64.b64decode(uri.split(",", 1)[1])[:8] == b"\x89PNG\r\n\x1a\n"


def test_normals_figure_draws_one_line_per_basin():
    table = pd.DataFrame({"a $1": np.arange(1.0, 13.0), "b": np.full(12, 5.0)}, index=range(1, 13))
    ax = figs.normals_figure(table).axes[0]
    assert [t.get_text() for t in ax.get_legend().get_texts()] == [r"a \$1", "b"]
    np.testing.assert_array_equal(ax.lines[1].get_ydata(), np.full(12, 5.0))
    assert ax.get_title() == "Monthly normal precipitation by basin"


def test_share_figure_in_percent_with_sen_line_and_mean():
    years = np.arange(2001, 2006)
    by_year = pd.DataFrame({"upper": [0.2, 0.22, 0.24, 0.26, 0.28], "lower": [0.1] * 5}, index=years)
    # slope 0.02 per year, intercept chosen so the line passes through the 2001 value
    trends = {"upper": (0.02, 0.2 - 0.02 * 2001, 0.03)}
    fig = figs.share_figure(by_year, trends, season="JA")
    top, bottom = fig.axes[:2]
    np.testing.assert_allclose(top.lines[0].get_ydata(), [20.0, 22.0, 24.0, 26.0, 28.0])
    np.testing.assert_allclose(top.lines[1].get_ydata(), [20.0, 22.0, 24.0, 26.0, 28.0])
    labels = [t.get_text() for t in top.get_legend().get_texts()]
    # Hand arithmetic: 0.02 per year = 2 % points per year = +20 % points per decade; mean 24 %.
    assert "Sen slope +20 % points per decade (Mann–Kendall p = 0.03)" in labels
    assert "mean 24.0 %" in labels
    assert len(bottom.lines) == 2  # no trend given for "lower": its points and its mean only
    assert fig._suptitle.get_text() == "Seasonal share JA of each year's precipitation"


def test_map_figure_draws_the_field():
    pytest.importorskip("cartopy")
    field = xr.DataArray(
        np.arange(6.0).reshape(2, 3),
        dims=("lat", "lon"),
        coords={"lat": [0.5, 1.5], "lon": [10.5, 11.5, 12.5]},
        attrs={"units": "mm"},
    )
    basin = Basin.from_vertices([(10.0, 0.0), (11.0, 0.0), (11.0, 1.0)], name="a $ b")
    fig = figs.map_figure(field.expand_dims(member=1), basins=[basin])
    meshes = [c for ax in fig.axes for c in ax.collections if hasattr(c, "get_array") and c.get_array() is not None]
    assert any(np.ma.getdata(m.get_array()).size == 6 for m in meshes)
