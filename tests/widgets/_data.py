"""Small synthetic inputs for widget tests (a few hundred cells, in memory)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import xarray as xr


def monthly_pr(years=(2001, 2012), ny=6, nx=8, seed=0, dask=False):
    """Monthly depths (mm) on a 0.5° grid with a summer share that grows southward."""
    rng = np.random.default_rng(seed)
    time = pd.date_range(f"{years[0]}-01-01", f"{years[1]}-12-01", freq="MS")
    lat = 10.25 + 0.5 * np.arange(ny)
    lon = -30.25 + 0.5 * np.arange(nx)
    month = time.month.to_numpy()
    base = 50 + 30 * rng.random((time.size, ny, nx))
    summer = np.isin(month, (7, 8))[:, None, None] * (40 + 10 * (ny - np.arange(ny)))[None, :, None]
    data = base + summer
    pr = xr.DataArray(
        data,
        dims=("time", "lat", "lon"),
        coords={"time": time, "lat": lat, "lon": lon},
        name="pr",
        attrs={
            "units": "mm",
            "step": "month",
            "long_name": "precipitation",
            "standard_name": "lwe_thickness_of_precipitation_amount",
            "cell_methods": "time: sum",
        },
    )
    return pr.chunk({"time": 48}) if dask else pr


def basins():
    from climwidgets.geo.basin import Basin

    return [
        Basin.from_vertices([(-30.0, 10.2), (-28.6, 10.2), (-28.6, 11.4), (-30.0, 11.4)], name="South"),
        Basin.from_vertices([(-29.5, 11.6), (-27.4, 11.6), (-27.9, 12.9)], name="North"),
    ]


def click(frame, lon, lat, dblclick=False, name="button_press_event"):
    """Press the mouse on ``frame``'s canvas at lon/lat, as the browser front-end would."""
    from matplotlib.backend_bases import MouseEvent

    fx, fy = frame.figure_fraction(lon, lat)
    x, y = fx * frame.figure.bbox.width, fy * frame.figure.bbox.height
    if name == "button_press_event":
        MouseEvent(name, frame.canvas, x, y, button=1, dblclick=dblclick)._process()
    else:
        MouseEvent(name, frame.canvas, x, y)._process()


def download_links(w):
    """{file name: bytes} of the download links a widget shows (its :attr:`downloads`)."""
    import base64
    import html
    import re

    found = re.findall(r"download='([^']+)' href='data:[^;]+;base64,([^']*)'", w.downloads.value)
    return {html.unescape(n): base64.b64decode(b) for n, b in found}


def check_every_export(w):
    """Click every export button of ``w`` (copies off); return ``{label: {name: bytes}}``.

    Every CSV must read with a plain ``pandas.read_csv`` and carry a metadata file with
    the widget's settings; the "Table as CSV" must hold the shown table's numbers.
    """
    import io
    import json

    import pandas as pd

    w.save_copies = False
    out = {}
    for button in w.exports.children:
        w.downloads.value = ""
        button.click()
        assert w.error is None, (button.description, w.message.value)
        links = download_links(w)
        assert links, button.description
        out[button.description] = links
        for name, data in links.items():
            assert data, name
            if name.endswith(".csv"):
                table = pd.read_csv(io.BytesIO(data))
                assert len(table) > 0, name
                meta = json.loads(links[name + "-metadata.json"])
                assert meta["url"] == name and meta["parameters"], name
                if button.description == "Table as CSV":
                    nidx = len(meta["index"])
                    shown = w.table.select_dtypes("number")
                    back = table.iloc[:, nidx:][[str(c) for c in shown.columns]]
                    np.testing.assert_allclose(
                        back.to_numpy(dtype=float), shown.to_numpy(dtype=float), rtol=1e-12, equal_nan=True
                    )
            elif name.endswith(".png"):
                assert data[:4] == b"\x89PNG"
            elif name.endswith(".html"):
                assert b"<html" in data[:500].lower()
            elif name.endswith(".nc"):
                assert data[:4] in (b"\x89HDF", b"CDF\x01", b"CDF\x02")
    return out
