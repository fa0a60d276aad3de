"""ComparisonWidget: how two precipitation products agree, and basin climatology across all.

Pick a reference and another product and an agreement metric (bias, ratio, RMSE,
correlation, KGE, NSE).  The products are brought to common years, months and grid by
``cw.align`` and compared by ``cw.compare``; the map shows the chosen metric (diverging
brown-green for the bias, sequential for the others).  The table is
``cw.products_basin_table`` over every product, with the spread across products; a bar
chart shows each basin's mean annual total per product.

``widget.result`` is the Dataset of ``cw.compare(aligned[reference], aligned[other])``;
``widget.basin_table`` the DataFrame of ``cw.products_basin_table``.  Changing the metric
only redraws; the season of the table is a constructor parameter.
"""

from __future__ import annotations

import ipywidgets as widgets
import numpy as np
import pandas as pd

from ..analyses.comparison import METRICS, agreement_maps, aligned_products, products_frame, products_table
from ..analyses.meta import display_frame
from ..compute.seasonal import season_label
from ..errors import ParameterError
from ..geo.basinset import whole_grid_basin
from ..plot.charts import products_chart
from .base import BaseWidget
from .mapframe import MapFrame

__all__ = ["ComparisonWidget", "METRICS"]


class ComparisonWidget(BaseWidget):
    """Agreement map of two products and the basin table across all products.

    Parameters
    ----------
    datasets : dict of {name: DataArray}
        Precipitation products (mm per step, any step, calendar and grid); at least two.
    basins : list of Basin or a shared cw.BasinSet, optional (changes to a shared set show here)
        Basins of the table; without them the whole common grid is used.
    months : tuple of int, default (7, 8)
        Season whose share the table reports.
    export_dir : folder for the export buttons.

    Products with a member dimension (an ensemble against a gauge grid, say) get the
    "Ensemble member" menu: the metrics are computed per member (a product without
    members is compared with each) and the basin table is made per member, and both are
    then shown for the chosen member, as the ensemble mean or as the spread between
    members (``cw.member_view``).
    """

    title = "Comparing precipitation products"
    export_stem = "comparison"
    member_state = ("basin_table",)

    def member_source(self):
        return self.datasets

    def __init__(self, datasets, basins=None, months=(7, 8), export_dir="out"):
        if not isinstance(datasets, dict) or len(datasets) < 2:
            raise ParameterError(
                "a comparison needs at least two products",
                source="ComparisonWidget",
                variable="datasets",
                expected="{'name': DataArray, ...} with two or more entries",
                fix="pass e.g. {'gauge grid': pr_a, 'reanalysis': pr_b}",
            )
        self.datasets = dict(datasets)
        self.use_basins(basins)
        self.months = tuple(months)
        self.basin_table = None
        self._aligned = None
        self._pending = {}
        names = list(self.datasets)
        style = {"description_width": "90px"}
        lay = widgets.Layout(width="300px")
        self.reference = widgets.Dropdown(
            options=names, value=names[0], description="Reference", style=style, layout=lay
        )
        self.other = widgets.Dropdown(options=names, value=names[1], description="Other", style=style, layout=lay)
        self.metric = widgets.Dropdown(
            options=[(label, key) for key, label in METRICS.items()],
            value="bias",
            description="Metric",
            style=style,
            layout=lay,
        )
        super().__init__(map_frame=MapFrame(basins=self.basins, kind="difference"), export_dir=export_dir)
        # choosing as reference the product shown as other swaps the two (never one against itself)
        self._choice = (self.reference.value, self.other.value)
        self.reference.observe(self._swap, names="value")
        self.other.observe(self._swap, names="value")
        self.watch(self.reference, self.other)
        self.watch_display(self.metric)
        self.refresh()

    def _swap(self, change):
        ref, other = self.reference.value, self.other.value
        if ref == other:
            with self.quiet():  # one computation for the swap, started by the watcher below
                if change["owner"] is self.reference:
                    self.other.value = self._choice[0]
                else:
                    self.reference.value = self._choice[1]
        self._choice = (self.reference.value, self.other.value)

    def basins_changed(self, event, details):
        self.map.set_basins(self.basins)
        if self.basin_table is not None:
            if event == "rename":  # same outline, new name: rename its rows, compute nothing
                old, new = details
                self.basin_table = self.basin_table.rename(index={old: new}, level="basin")
            elif event == "replace":  # outlines may have changed under the same names
                self.basin_table = None
        self.refresh()  # only basins without rows are computed (see compute)

    # ------------------------------------------------------------ BaseWidget hooks
    def build_controls(self):
        note = widgets.HTML(
            "<small>Products are compared as monthly totals over their common complete "
            "years, on the coarsest product's grid (conservative regridding).</small>"
        )
        return [self.reference, self.other, self.metric, note]

    def parameters(self):
        ref, other = self.reference.value, self.other.value
        if ref == other:
            raise ParameterError(
                f"reference and other are both {ref!r}",
                source="ComparisonWidget",
                variable="other",
                expected="two different products",
                fix="choose another product as 'Other'",
            )
        return {"reference": ref, "other": other}

    def compute(self, reference, other):
        if self._aligned is None:  # the common period and grid do not depend on the choice
            self._aligned = aligned_products(self.datasets)
        out = {"compare": agreement_maps(self._aligned, reference, other)}
        basins = self.basins or [b for b in [whole_grid_basin(self._aligned[reference])] if b is not None]
        have = set() if self.basin_table is None else set(self.basin_table.index.get_level_values("basin"))
        new = [b for b in basins if b.name not in have]
        if new:  # only the basins without rows: a basin joining the set costs its own numbers
            out["table"] = products_table(self.datasets, new, months=self.months)  # lazy: one pass with the maps
        out["basin_order"] = [b.name for b in basins]
        return out

    def finish(self, computed, params):
        ds = computed["compare"]
        table = computed.get("table")
        self._pending = {id(ds): (products_frame(table) if table is not None else None, computed["basin_order"])}
        return ds

    def render(self, result, params):
        table, order = self._pending.pop(id(result), (None, None))
        if order is not None:
            self.basin_table = _merge_rows(self.basin_table, table, order)
        self._params = params
        self._show()

    # ------------------------------------------------------------ redraw only

    def _show(self):
        metric = self.metric.value
        field = self.result[metric]
        kind = "difference" if metric == "bias" else "sequential"
        ref, other = self._params["reference"], self._params["other"]
        mean = float(np.nanmean(np.asarray(field.values, dtype=float)))
        words = field.attrs.get("label", metric)
        self.map.show_field(
            field,
            kind=kind,
            label=f"{words} [{field.attrs.get('display_units', '')}]",
            title=f"{other} against {ref}: {words} (grid mean {mean:,.2f})",
        )
        self.show_table(self._display_table())
        if self.basin_table is not None:
            self.show_chart(self._chart())

    def _display_table(self):
        """The basin table with column names in words (``widget.basin_table`` keeps the originals)."""
        if self.basin_table is None:
            return None
        season = season_label(self.months)
        return display_frame(self.basin_table, seasonal_share={"label": f"seasonal share {season}"})

    def domain_mean(self, metric="bias") -> float:
        """Plain mean over the grid cells of one metric map (cells without data left out)."""
        return float(self.result[metric].mean(skipna=True))

    def _chart(self):
        return products_chart(self.basin_table, list(self.datasets))


def _merge_rows(old, new, order):
    """The basin rows of ``old`` and ``new`` (tables of ``products_basin_table``) for ``order``."""
    parts = [t for t in (old, new) if t is not None]
    if not parts:
        return None
    attrs = dict((old if old is not None else new).attrs)
    if old is not None and new is not None and new.attrs.get("history"):  # say how the rows were made
        attrs["history"] = "\n".join(h for h in (old.attrs.get("history"), new.attrs["history"]) if h)
    merged = pd.concat(parts) if len(parts) > 1 else parts[0]
    merged = merged[~merged.index.duplicated(keep="last")]
    keep = [b for b in order if b in set(merged.index.get_level_values("basin"))]
    merged = pd.concat([merged.xs(b, level="basin", drop_level=False) for b in keep]) if keep else merged.iloc[:0]
    merged.attrs = attrs
    return merged
