"""Basin anomaly tables: where a step stands in each basin's record.

The anomalies themselves are :func:`cw.anomaly` or :func:`cw.spi` of each basin's
area-weighted mean precipitation; this module turns the basin series into the table a
widget or a report shows at one step (value, rank from the driest, driest and wettest in
the record, SPI class).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

__all__ = ["UNIT_WORDS", "step_table"]

#: How anomaly units read on screen.
UNIT_WORDS = {"1": "standard deviations", "%": "%", "mm": "mm"}


def step_table(series: pd.DataFrame, step: str, units: str = "", classes: pd.DataFrame | None = None):
    """One row per basin (the columns of ``series``) describing ``step``.

    ``series`` is indexed by step label with one column per basin; ``classes`` the SPI
    class of each step and basin, when the anomaly is SPI.  The rank counts from the
    driest step (1 = driest in the record).
    """
    if series is None or series.empty:
        return None
    shown = UNIT_WORDS.get(units, "")
    rows = []
    for name in series.columns:
        s = series[name]
        value = s.loc[step]
        valid = s.dropna()
        row = {"basin": name, f"{step} [{shown}]": value,
               "rank (1 = driest)": int((valid < value).sum()) + 1 if np.isfinite(value) else np.nan,
               "steps in record": len(valid),
               "driest in record": valid.min() if len(valid) else np.nan,
               "wettest in record": valid.max() if len(valid) else np.nan}
        if classes is not None:
            row["SPI class"] = classes[name].loc[step]
        rows.append(row)
    return pd.DataFrame(rows).set_index("basin")
