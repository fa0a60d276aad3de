"""End to end on the demo: the daily product against the coarse no-leap product.

The demo generator put a known bias into the coarse product (climwidgets.demo.COARSE_BIAS:
monthly totals x 1.08 in November-March, x 0.95 in June-August). Opening both files,
aligning them (daily -> monthly totals, no-leap and standard calendars by year-month,
conservative regridding to the coarse grid) and comparing must find that bias again.
"""

import pytest

import climwidgets as cw
from climwidgets.demo import COARSE_BIAS


@pytest.fixture(scope="module")
def aligned(demo_files):
    paths = demo_files
    daily = cw.open_precip(paths["daily"])
    coarse = cw.open_precip(paths["coarse_monthly"])
    assert daily.attrs["step"] == "day" and coarse.attrs["calendar"] == "noleap"
    return cw.align({"daily": daily, "coarse": coarse})


def test_monthly_bias_factors_are_recovered(aligned):
    area = cw.cell_area(aligned["daily"])
    means = {k: v.weighted(area).mean(("lat", "lon")).groupby("time.month").mean() for k, v in aligned.items()}
    factors = (means["coarse"] / means["daily"]).compute()
    for month in range(1, 13):
        # tolerance: February of leap years is spread over 28 no-leap days (a 1/29 share moves
        # between months), and smoothing at the domain edge moves a little water around.
        assert float(factors.sel(month=month)) == pytest.approx(COARSE_BIAS[month], abs=3e-3), month


def test_bias_map_shows_the_wetter_winters(aligned):
    scores = cw.compare(aligned["daily"], aligned["coarse"]).compute()
    monthly_mean = aligned["daily"].groupby("time.month").mean().compute()
    # expected annual bias per cell from the factors alone: sum over months of (f_m - 1) x normal_m
    expected = sum((COARSE_BIAS[m] - 1.0) * monthly_mean.sel(month=m) for m in range(1, 13))
    area = cw.cell_area(scores)
    got = float(scores["bias"].weighted(area).mean())
    want = float(expected.weighted(area).mean())
    assert got > 0 and got == pytest.approx(want, rel=0.05)
    assert scores["bias"].attrs["units"].startswith("mm")
    assert float(scores["corr"].median()) > 0.9
