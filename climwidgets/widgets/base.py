"""BaseWidget: the frame every climwidgets widget is built on.

Layout, top to bottom: a title, then the controls panel beside the map panel, the
results table, an optional chart, the export buttons, a progress bar and a message line.

Building a widget
-----------------
Subclass :class:`BaseWidget` and fill in four small methods; the base does the rest
(threads, progress, stale results, errors, exports)::

    class TotalsWidget(BaseWidget):
        title = "Annual totals"

        def __init__(self, pr):
            self.pr = pr
            self.year_start = widgets.Dropdown(options=[("January", 1), ("October", 10)])
            super().__init__(map_frame=MapFrame(kind="total"))   # builds the layout
            self.watch(self.year_start)           # a change recomputes
            self.refresh()                        # first computation

        def build_controls(self):                 # widgets shown in the controls panel
            return [self.year_start]

        def parameters(self):                     # read the controls (main thread)
            return {"year_start": self.year_start.value}

        def compute(self, year_start):            # pure: public cw functions, lazy is fine
            return cw.annual_totals(self.pr, year_start).mean("year")

        def render(self, result, params):         # show the computed numbers
            self.map.show_field(result, kind="total")
            self.show_table(some_dataframe)        # results table (a DataFrame)
            self.show_chart(some_figure)           # optional chart (a matplotlib Figure)

``compute`` runs in a worker thread and returns anything ``dask.compute`` understands
(a DataArray, a dict or tuple of them, pandas objects...); the base computes it with a
dask callback that feeds the progress bar, then calls ``finish(computed, params)``
(default: identity) in the worker and stores the outcome in ``self.result``.  ``render``
runs only if no newer request arrived meanwhile.

* Every parameter change bumps a generation counter.  A computation whose generation is no
  longer current is aborted at its next dask task and its result discarded, so dragging a
  slider never queues stale work.
* A :class:`climwidgets.errors.InputError` (bad parameters, bad data) appears as a plain
  message in the widget, not a traceback; ``self.error`` holds it.  Unexpected errors are
  shown in one line too, with the exception kept in ``self.error`` for debugging.
* :meth:`wait` blocks until the current computation is finished (tests, notebooks);
  :meth:`compute_now` computes in the calling thread.
* :meth:`add_export` adds a button writing a file atomically into ``export_dir``; CSV
  of the table and PNG of the map are there by default.
"""

from __future__ import annotations

import contextlib
import html
import threading
import traceback
from pathlib import Path

import ipywidgets as widgets
import pandas as pd
from dask.callbacks import Callback

from ..atomic import atomic_write
from ..errors import InputError

__all__ = ["BaseWidget", "DaskProgress", "Superseded", "unique_path", "df_to_html"]


class Superseded(Exception):
    """Raised inside a stale computation to stop it (never shown to users)."""


class DaskProgress(Callback):
    """A dask local-scheduler callback that moves a progress bar and stops stale work.

    Registered with ``with DaskProgress(...):`` around the whole computation, so that
    compute functions that call ``dask.compute`` themselves are followed too.  Dask calls
    these hooks from the thread that asked for the computation; hooks from other threads
    (another widget computing at the same time) are ignored.  With a ``dask.distributed``
    client the hooks are not called: the bar then only shows start and end.
    """

    def __init__(self, bar: widgets.FloatProgress, is_current):
        super().__init__()
        self.bar = bar
        self.is_current = is_current
        self.thread = threading.get_ident()
        self.total = 1
        self.done = 0

    def _mine(self):
        return threading.get_ident() == self.thread

    def _start_state(self, dsk, state):
        if not self._mine():
            return
        self.total = max(1, len(state["ready"]) + len(state["waiting"]) + len(state.get("running", ())))
        self.done = 0
        if self.is_current():
            self.bar.value = 0.0

    def _pretask(self, key, dsk, state):
        if self._mine() and not self.is_current():
            raise Superseded(key)

    def _posttask(self, key, result, dsk, state, worker_id):
        if not self._mine():
            return
        self.done += 1
        if self.is_current():
            self.bar.value = min(1.0, self.done / self.total)


def unique_path(folder, name):
    """``folder/name``, or ``folder/stem-2.ext`` etc. when taken: buttons never overwrite."""
    path = Path(folder) / name
    stem, suffix, n = path.stem, path.suffix, 2
    while path.exists():
        path = Path(folder) / f"{stem}-{n}{suffix}"
        n += 1
    return path


def df_to_html(df: pd.DataFrame, float_format="{:.4g}".format) -> str:
    """A small escaped HTML table (user text such as basin names is escaped)."""
    if df is None or len(df) == 0:
        return "<i>No rows yet.</i>"
    return df.to_html(escape=True, float_format=float_format, border=0, classes="cw-table",
                      na_rep="no data")


_CSS = """<style>
.cw-table {border-collapse: collapse; font-size: 12px;}
.cw-table th, .cw-table td {padding: 2px 8px; border-bottom: 1px solid #ddd; text-align: right;}
.cw-table th:first-child, .cw-table td:first-child {text-align: left;}
</style>"""


class BaseWidget(widgets.VBox):
    """Controls, map, results table, exports, progress and messages (see module doc).

    Attributes
    ----------
    result : the current numbers (xarray or pandas), None before the first computation
    table : pandas.DataFrame shown in the results table
    error : the last error, or None
    """

    title = ""
    export_stem = "climwidgets"

    def __init__(self, map_frame=None, export_dir="out", chart=True):
        self.map = map_frame
        self.result = None
        self.table = None
        self.error = None
        self.export_dir = Path(export_dir)
        self._gen = 0
        self._quiet = 0
        self._lock = threading.Lock()
        self._render_lock = threading.RLock()
        self._done = {0: threading.Event()}
        self._done[0].set()
        self.progress = widgets.FloatProgress(value=0.0, min=0.0, max=1.0, description="Working",
                                              layout=widgets.Layout(visibility="hidden", width="320px"))
        self.message = widgets.HTML("")
        self.table_html = widgets.HTML(_CSS + "<i>No rows yet.</i>")
        self.chart = widgets.Image(format="png", layout=widgets.Layout(max_width="640px")) if chart else None
        self.exports = widgets.HBox([])
        self.add_export("Table as CSV", self._write_csv, "csv")
        if self.map is not None:
            self.add_export("Map as PNG", lambda path: path.write_bytes(self.map.png_bytes()), "png")
        self.controls = widgets.VBox(self.build_controls(), layout=widgets.Layout(min_width="300px"))
        panels = [self.controls] + ([self.map] if self.map is not None else [])
        children = []
        if self.title:
            children.append(widgets.HTML(f"<h3 style='margin:4px 0'>{html.escape(self.title)}</h3>"))
        children += [widgets.HBox(panels), self.table_html]
        if self.chart is not None:
            children.append(self.chart)
        children += [self.exports, self.progress, self.message]
        super().__init__(children=children)

    # ------------------------------------------------------------ for subclasses
    def build_controls(self) -> list:
        """Widgets for the controls panel."""
        return []

    def parameters(self) -> dict:
        """Current parameter values read from the controls."""
        return {}

    def compute(self, **params):
        """Public compute calls for ``params``; may return lazy (dask) objects."""
        raise NotImplementedError

    def finish(self, computed, params):
        """Turn the computed objects into ``self.result`` (runs in the worker)."""
        return computed

    def render(self, result, params):
        """Show ``result``: map, table (:meth:`show_table`), chart."""

    def _show(self):
        """Redraw the current result for display-only controls (see :meth:`watch_display`)."""

    def _can_redraw(self) -> bool:
        return self.result is not None

    # ------------------------------------------------------------ machinery
    def watch(self, *controls, names="value"):
        """Recompute when any of ``controls`` changes."""
        for control in controls:
            control.observe(self.refresh, names=names)

    def watch_display(self, *controls, names="value"):
        """Redraw without recomputing when any of ``controls`` changes (layer, metric, colour...)."""
        for control in controls:
            control.observe(self._redraw, names=names)

    def _redraw(self, *_):
        if not self._can_redraw():
            return
        with self._render_lock:
            self._show()

    @contextlib.contextmanager
    def quiet(self):
        """Change several controls without starting a computation for each change."""
        self._quiet += 1
        try:
            yield
        finally:
            self._quiet -= 1

    def _is_current(self, gen):
        return gen == self._gen

    def refresh(self, *_ignored, background=True):
        """Start a computation for the current parameters (supersedes any running one)."""
        if self._quiet:
            return
        try:
            params = self.parameters()
        except InputError as exc:
            self._show_error(exc)
            return
        with self._lock:
            self._gen += 1
            gen = self._gen
            self._done[gen] = threading.Event()
            for old in [g for g in self._done if g < gen - 8]:
                self._done.pop(old, None)
        self.progress.value = 0.0
        self.progress.layout.visibility = "visible"
        if background:
            threading.Thread(target=self._run, args=(gen, params), daemon=True,
                             name=f"climwidgets-{type(self).__name__}-{gen}").start()
        else:
            self._run(gen, params)

    def compute_now(self):
        """Compute for the current parameters in the calling thread; return ``self.result``."""
        self.refresh(background=False)
        return self.result

    def wait(self, timeout=120):
        """Block until the current computation is done; return ``self.result``.

        If the parameters change while waiting, waits for the newer computation.
        """
        while True:
            gen = self._gen
            event = self._done.get(gen)
            if event is not None and not event.wait(timeout):
                raise TimeoutError(f"{type(self).__name__}: computation still running after {timeout} s")
            if gen == self._gen:
                return self.result

    def _run(self, gen, params):
        import dask

        try:
            from ..scale import CancelledComputation, compute_on_cluster, current_client

            client = current_client()
            if client is None:
                with DaskProgress(self.progress, lambda: self._is_current(gen)):
                    lazy = self.compute(**params)
                    (computed,) = dask.compute(lazy)
            else:  # a dask cluster is in use (cw.use_cluster): its progress feeds the same bar
                lazy = self.compute(**params)
                try:
                    computed = compute_on_cluster(
                        lazy, client, on_progress=lambda f: setattr(self.progress, "value", f),
                        is_current=lambda: self._is_current(gen))
                except CancelledComputation:
                    raise Superseded() from None
            if not self._is_current(gen):
                return
            result = self.finish(computed, params)
            with self._render_lock:
                if not self._is_current(gen):
                    return
                self.result = result
                if self.error is not None:  # clear an old error, keep plain notes
                    self.error = None
                    self.message.value = ""
                self.render(result, params)
        except Superseded:
            return
        except KeyboardInterrupt:  # Ctrl-C: stop, say so, stay usable
            if self._is_current(gen):
                self.message.value = "Interrupted. Change a setting to compute again."
            if threading.current_thread() is threading.main_thread():
                raise  # compute_now in the kernel's thread: the interrupt reaches the user
        except InputError as exc:
            if self._is_current(gen):
                self._show_error(exc)
        except Exception as exc:  # shown in one line; kept for debugging
            if self._is_current(gen):
                self.error = exc
                self._traceback = traceback.format_exc()
                self.message.value = (f"<span style='color:#b30000'>Unexpected problem "
                                      f"({html.escape(type(exc).__name__)}): {html.escape(str(exc))}</span>")
        finally:
            if self._is_current(gen):
                self.progress.value = 1.0
                self.progress.layout.visibility = "hidden"
            event = self._done.get(gen)
            if event is not None:
                event.set()

    def _show_error(self, exc):
        self.error = exc
        self.message.value = f"<span style='color:#b30000'>{html.escape(str(exc))}</span>"

    def say(self, text):
        """A plain (escaped) note in the message line."""
        self.message.value = html.escape(text)

    def show_table(self, df: pd.DataFrame | None):
        """Show a DataFrame in the results table and keep it as ``self.table``."""
        self.table = df
        self.table_html.value = _CSS + df_to_html(df)

    def show_chart(self, figure, dpi=100):
        """Show a static matplotlib Figure as a PNG image (safe from worker threads)."""
        if self.chart is None:
            return
        import io

        from matplotlib.backends.backend_agg import FigureCanvasAgg

        FigureCanvasAgg(figure)
        buf = io.BytesIO()
        figure.savefig(buf, format="png", dpi=dpi, bbox_inches="tight")
        self.chart.value = buf.getvalue()
        self.chart_figure = figure

    # ------------------------------------------------------------ exports
    def add_export(self, label, write, suffix, stem=None):
        """Add a button that writes ``export_dir/<stem>.<suffix>`` via ``write(path)``.

        ``write`` receives a temporary path next to the target; the base renames it into
        place (atomic) under a name that does not exist yet.
        """
        button = widgets.Button(description=label, icon="download", layout=widgets.Layout(width="auto"))

        def on_click(_):
            try:
                path = self.export(write, suffix, stem)
            except InputError as exc:
                self._show_error(exc)
            except Exception as exc:  # a message in the widget, not a silent failure in a callback
                self._show_error(InputError(f"could not export ({type(exc).__name__}: {exc})",
                                            source=str(self.export_dir),
                                            fix="check the export folder (widget.export_dir) and try again"))
            else:
                self.say(f"Saved {path}")

        button.on_click(on_click)
        self.exports.children = (*self.exports.children, button)
        return button

    def export(self, write, suffix, stem=None):
        """Write one export now; returns its path."""
        target = unique_path(self.export_dir, f"{stem or self.export_stem}.{suffix}")
        target.parent.mkdir(parents=True, exist_ok=True)
        return atomic_write(target, False, write, f"{type(self).__name__} export")

    def _write_csv(self, path):
        if self.table is None:
            raise InputError("there is no table to export yet", source=type(self).__name__,
                              fix="wait for the computation to finish")
        self.table.to_csv(path)
