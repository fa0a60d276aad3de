"""plot/scenario.py: hatching over the cells where too few members agree."""

import numpy as np
import pytest
import xarray as xr

from climwidgets.plot.scenario import mark_low_agreement

ccrs = pytest.importorskip("cartopy.crs")


def _axes():
    from matplotlib.figure import Figure

    return Figure().add_subplot(1, 1, 1, projection=ccrs.PlateCarree())


def _agreement():
    values = np.array([[0.9, 0.5, np.nan], [0.8, 1.0, 0.6]])
    return xr.DataArray(values, dims=("lat", "lon"), coords={"lat": [0.5, 1.5], "lon": [10.5, 11.5, 12.5]})


def test_cells_below_the_level_are_hatched_and_only_those():
    ax = _axes()
    marks = mark_low_agreement(ax, _agreement(), 0.66)
    assert marks is not None and marks.get_hatch() == "..."
    assert np.all(marks.get_facecolor()[:, 3] == 0)  # transparent: the colours show through
    # two cells (0.5 and 0.6) are below 2/3; the missing cell is not marked
    assert int(np.count_nonzero(~np.ma.getmaskarray(marks.get_array()))) == 2


def test_nothing_drawn_when_every_cell_agrees():
    ax = _axes()
    assert mark_low_agreement(ax, _agreement(), 0.4) is None
    assert not ax.collections
