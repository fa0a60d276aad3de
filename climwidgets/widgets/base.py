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

``compute`` runs in a worker thread and returns lazy xarray objects (analyses), possibly
in a dict or tuple; the base computes them in one pass (``climwidgets.analyses.run``)
with the suite's progress callback, calls ``finish(computed, params)`` (default:
identity) in the worker, and then hands the outcome to the kernel's thread: the kernel's
event loop (``io_loop.add_callback``) — or :meth:`wait`, when the kernel's thread is
waiting — stores it in ``self.result`` and calls ``render``.  So every widget and figure
update happens on one thread; no worker touches widget state.  ``render`` runs only if
no newer request arrived meanwhile.

Basins: a widget given ``basins=`` (a list or a shared :class:`cw.BasinSet`) keeps them
in ``self.basin_set`` and hears of every change to it (:meth:`basins_changed`).

* Every parameter change bumps a generation counter.  A computation whose generation is no
  longer current is aborted at its next dask task and its result discarded, so dragging a
  slider never queues stale work.
* A :class:`climwidgets.errors.InputError` (bad parameters, bad data) appears as a plain
  message in the widget, not a traceback; ``self.error`` holds it.  Unexpected errors are
  shown in one line too, with the exception kept in ``self.error`` for debugging.
* :meth:`wait` blocks until the current computation is finished (tests, notebooks);
  :meth:`compute_now` computes in the calling thread.
* :meth:`add_export` adds a button that prepares a file and shows a download link for it
  in the page (the bytes inside the link, so it works in Voilà and JupyterLab with no
  server route), and also saves it atomically into ``export_dir`` when ``save_copies``;
  CSV of the table (with its metadata file, see :mod:`climwidgets.report.tables`) and
  PNG of the map are there by default.

Units: a "Units" menu (SI / US customary) sits under the controls of every widget
(``units_choice = False`` leaves it out).  The numbers are computed once, in SI; the
choice is applied where they are shown: :meth:`show_table` re-expresses the table it is
given (:func:`climwidgets.analyses.meta.shown_in_units`), the map's ``show_field`` is given
the field with the display attributes of the choice (colour bar and hover alike), and
:meth:`in_units` does the same for a subclass's other tables.  Changing the menu shows
the table and the map again, then calls :meth:`units_changed` (for a subclass's other
tables and charts): nothing is recomputed.  The CSV export holds the numbers as shown,
and its metadata names each column's units.

Ensembles: when the widget's data (``self.pr``, or what :meth:`member_source` returns)
have a member dimension, an "Ensemble member" menu heads the controls: each member, the
ensemble mean and the spread between members.  ``compute`` runs on the whole ensemble and
the base takes :func:`climwidgets.analyses.ensemble.member_view` of its output before
``finish`` (statistics per member first, then the summary); each choice keeps its own
caches, and the map title, the table caption, export file names and the CSV metadata
name the choice.  See :mod:`climwidgets.widgets.members`.
"""

from __future__ import annotations

import collections
import contextlib
import html
import threading
import traceback
import weakref
from pathlib import Path

import ipywidgets as widgets
import pandas as pd

from ..analyses.meta import UNIT_SYSTEMS, field_in_units, format_cell, shown_in_units
from ..atomic import atomic_write
from ..errors import InputError
from ..geo.basinset import BasinSet
from ..scale import Superseded, TaskProgress

__all__ = ["BaseWidget", "KernelThread", "Superseded", "unique_path", "df_to_html", "MONTH_OPTIONS"]


def _kernel_loop():
    """The running kernel's event loop (a tornado IOLoop on the kernel's thread), or None."""
    try:
        from ipykernel.kernelbase import Kernel
    except ImportError:
        return None
    if not Kernel.initialized():
        return None
    return getattr(Kernel.instance(), "io_loop", None)


class KernelThread:
    """Runs widget updates on the thread that owns the widgets (the kernel's).

    :meth:`call` from that thread runs at once; from any other thread it queues the call
    and asks the kernel's event loop to run the queue.  :meth:`drain` runs what is
    queued; :meth:`BaseWidget.wait` drains too, so that a cell waiting for a result on
    the kernel's thread (or a script with no kernel) still gets it rendered there.
    """

    def __init__(self):
        self.ident = threading.get_ident()
        self.loop = _kernel_loop()
        self._queue = collections.deque()
        self._lock = threading.Lock()

    def on_owner(self) -> bool:
        return threading.get_ident() == self.ident

    def call(self, fn) -> None:
        if self.on_owner():
            self.drain()
            fn()
            return
        with self._lock:
            self._queue.append(fn)
        if self.loop is not None:
            self.loop.add_callback(self.drain)

    def drain(self) -> None:
        if not self.on_owner():
            return
        while True:
            with self._lock:
                if not self._queue:
                    return
                fn = self._queue.popleft()
            fn()


MONTH_OPTIONS = None  # filled below from the one month-name table


def _month_options():
    from ..compute._time import MONTH_FULL_NAMES

    return [(name, i + 1) for i, name in enumerate(MONTH_FULL_NAMES)]


MONTH_OPTIONS = _month_options()


def unique_path(folder, name):
    """``folder/name``, or ``folder/stem-2.ext`` etc. when taken: buttons never overwrite."""
    path = Path(folder) / name
    stem, suffix, n = path.stem, path.suffix, 2
    while path.exists():
        path = Path(folder) / f"{stem}-{n}{suffix}"
        n += 1
    return path


def df_to_html(df: pd.DataFrame, float_format="{:.4g}".format) -> str:
    """A small escaped HTML table (user text such as basin names is escaped).

    Columns described by an analysis (``df.attrs["columns"]``, see
    :func:`climwidgets.analyses.meta.frame`) use their own display format.
    """
    if df is None or len(df) == 0:
        return "<i>No rows yet.</i>"
    described = df.attrs.get("columns") or {}
    formatters = {
        c: (lambda v, a=described[c]: "no data" if format_cell(v, a) == "–" else format_cell(v, a))
        for c in df.columns
        if isinstance(described.get(c), dict)
    }
    return df.to_html(
        escape=True,
        float_format=float_format,
        border=0,
        classes="cw-table",
        na_rep="no data",
        formatters=formatters or None,
    )


_CSS = """<style>
.cw-table {border-collapse: collapse; font-size: 12px;}
.cw-table th, .cw-table td {padding: 2px 8px; border-bottom: 1px solid #ddd; text-align: right;}
.cw-table th:first-child, .cw-table td:first-child {text-align: left;}
.cw-stale {opacity: 0.35;}
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
    #: keys of the ``compute`` dict passed to ``finish`` with the member dimension kept
    member_whole: tuple = ()
    #: attributes (besides LRU caches) holding numbers of one member choice
    member_state: tuple = ()
    #: offer the SI / US customary units menu (see the module docstring)
    units_choice: bool = True

    def __init__(self, map_frame=None, export_dir="out", chart=True):
        self.map = map_frame
        self.result = None
        self.table = None
        self.error = None
        self.export_dir = Path(export_dir)
        self.kernel = KernelThread()
        if not hasattr(self, "basin_set"):
            self.basin_set = None
        self._gen = 0
        self._quiet = 0
        self._lock = threading.Lock()
        self._finish_lock = threading.RLock()  # finish (worker) against a member change (kernel's thread)
        self._done = {0: threading.Event()}
        self._done[0].set()
        self.progress = widgets.FloatProgress(
            value=0.0,
            min=0.0,
            max=1.0,
            description="Working",
            layout=widgets.Layout(visibility="hidden", width="320px"),
        )
        self.message = widgets.HTML("")  # errors and notes, under the controls that cause them
        self.stale_note = widgets.HTML("")
        self.table_html = widgets.HTML(_CSS + "<i>No rows yet.</i>")
        self.chart = widgets.Image(format="png", layout=widgets.Layout(max_width="640px")) if chart else None
        self.exports = widgets.HBox([])
        self.downloads = widgets.HTML("")
        self.last_saved = []
        self.add_export("Table as CSV", self._write_csv, "csv")
        if self.map is not None:
            self.add_export("Map as PNG", lambda path: path.write_bytes(self.map.png_bytes()), "png")
        self._init_members()
        self._init_units()
        head = [self.member] if self.member is not None else []
        tail = [self.units] if self.units is not None else []
        self.controls = widgets.VBox(
            head + self.build_controls() + tail + [self.message], layout=widgets.Layout(min_width="300px")
        )
        panels = [self.controls] + ([self.map] if self.map is not None else [])
        children = []
        if self.title:
            children.append(widgets.HTML(f"<h3 style='margin:4px 0'>{html.escape(self.title)}</h3>"))
        children += [self.stale_note, widgets.HBox(panels), self.table_html]
        if self.chart is not None:
            children.append(self.chart)
        children += [self.exports, self.downloads, self.progress]
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

    # ------------------------------------------------------------ units shown
    def _init_units(self):
        self._table_given = None
        self._map_call = None
        self.units = None
        if self.units_choice:
            self.units = widgets.Dropdown(
                options=[("SI (mm, million m³, km²)", "SI"), ("US customary (in, acre-ft, mi²)", "US")],
                value="SI",
                description="Units",
                layout=widgets.Layout(width="300px"),
            )
            self.units.observe(self._units_changed, names="value")
        if self.map is not None:
            self._wrap_map()

    @property
    def unit_system(self) -> str:
        """The unit system shown: ``"SI"`` or ``"US"`` (US customary)."""
        units = getattr(self, "units", None)
        return "SI" if units is None else units.value

    def in_units(self, table):
        """A table as shown (SI, from the analyses) in the units chosen in the menu."""
        return None if table is None else shown_in_units(table, self.unit_system)

    def _wrap_map(self):
        """The map draws every field in the chosen units (display attributes, not new numbers)."""
        original = self.map.show_field
        ref = weakref.ref(self)

        def show_field(field, *args, **kwargs):
            owner = ref()
            units = owner.unit_system if owner is not None else "SI"
            if owner is not None:
                owner._map_call = (field, args, dict(kwargs))  # as given (SI): redrawn on a units change
            positional = len(args) >= 4  # (kind, vmin, vmax, label, ...)
            label = args[3] if positional else kwargs.get("label")
            field, label = field_in_units(field, units, label)
            if positional:
                args = args[:3] + (label,) + args[4:]
            elif label is not None:
                kwargs["label"] = label
            return original(field, *args, **kwargs)

        self.map.show_field = show_field
        if getattr(self.map, "field", None) is not None:  # drawn before the widget was built
            self._map_call = (self.map.field, (), {"kind": getattr(self.map.mesh, "climwidgets_kind", None)})

    def units_changed(self):
        """Redraw what only the subclass shows (other tables, charts) in :attr:`unit_system`.

        The base has already redrawn the results table and the map; nothing is recomputed.
        """

    def _units_changed(self, _change=None):
        """Show the shown table and map again in the new units (kernel's thread; nothing recomputed)."""
        try:
            if self._table_given is not None:
                self.show_table(self._table_given)
            if self._map_call is not None:
                field, args, kwargs = self._map_call
                self.map.show_field(field, *args, **kwargs)
            self.units_changed()
        except Exception as exc:  # noqa: BLE001 - shown beside the controls, like a render problem
            self._fail(self._gen, exc, traceback.format_exc(), finished=False)

    # ------------------------------------------------------------ ensemble members
    def member_source(self):
        """The data whose member dimension the menu offers (default ``self.pr``)."""
        return getattr(self, "pr", None)

    def _init_members(self):
        from .members import find_member_dim, member_menu

        self._member_choice = {}
        self._member_stash = {}
        source = self.member_source()
        self.member_dim = find_member_dim(source)
        self.member = None
        self.n_members = 0
        if self.member_dim is not None:
            self.member = member_menu(source, self.member_dim)
            self.n_members = len(self.member.options) - 2
            self.member.observe(self._member_changed, names="value")

    @property
    def member_choice(self):
        """The member view shown: a member label, ``"mean"`` or ``"spread"`` (None without members)."""
        return None if self.member is None else self.member.value

    def _member_changed(self, change):
        """Keep the numbers of the old choice, bring back (or start empty) those of the new one."""
        from ..cache import LRUCache
        from .members import fresh_like

        # under the finish lock, with the running computation made stale first: its finish
        # either stored the old choice's numbers before the swap or is skipped
        with self._finish_lock:
            with self._lock:
                self._gen += 1
            names = [n for n, v in vars(self).items() if isinstance(v, LRUCache)]
            names += [n for n in self.member_state if hasattr(self, n) and n not in names]
            self._member_stash[change["old"]] = {n: getattr(self, n) for n in names}
            stored = self._member_stash.pop(change["new"], {})
            for n in names:
                setattr(self, n, stored[n] if n in stored else fresh_like(getattr(self, n)))
        self.refresh()

    def with_member(self, text: str) -> str:
        """``text`` followed by the member view shown, e.g. "Basin summary (ensemble mean)"."""
        return f"{text} ({self._member_words()['label']})" if self.member is not None else text

    def _member_words(self):
        from ..analyses.meta import member_view_words

        return member_view_words(self.member.value, self.n_members) if self.member is not None else None

    # ------------------------------------------------------------ basins
    def use_basins(self, basins):
        """Keep ``basins`` (a list, a Basin or a shared BasinSet) and follow its changes."""
        self.basin_set = basins if isinstance(basins, BasinSet) else BasinSet(basins or [])
        ref = weakref.WeakMethod(self._on_basin_event)

        def listener(event, details, ref=ref, basin_set=self.basin_set):
            method = ref()
            if method is None:  # the widget is gone
                basin_set.unobserve(listener)
            else:
                method(event, details)

        self.basin_set.observe(listener)
        return self.basin_set

    @property
    def basins(self) -> list:
        """The basins shown, as a list of :class:`cw.Basin` (see ``basin_set``)."""
        return list(self.basin_set) if self.basin_set is not None else []

    def _on_basin_event(self, event, details):
        kernel = getattr(self, "kernel", None)
        if kernel is None:  # still building
            return
        kernel.call(lambda: self.basins_changed(event, details))

    def basins_changed(self, event, details):
        """The shared basin set changed (runs on the kernel's thread): new outlines, recompute."""
        if self.map is not None:
            self.map.set_basins(self.basins)
        self.refresh()

    def add_layer(self, source, label=None, **style):
        """Draw an outline layer (GeoJSON or shapefile: coast, borders, rivers) on the map
        (:meth:`MapFrame.add_layer`); returns the widget, so it chains after the constructor."""
        if self.map is not None:
            self.map.add_layer(source, label=label, **style)
        return self

    def basins_or_whole_grid(self, whole):
        """The basins, or ``[whole]`` (a basin covering the grid) when there are none."""
        return self.basins or ([whole] if whole is not None else [])

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
        self.kernel.drain()
        try:
            params = self.parameters()
        except InputError as exc:
            # supersede any running computation: its older numbers must not replace the error
            with self._lock:
                self._gen += 1
                self._done[self._gen] = done = threading.Event()
            done.set()
            self.progress.layout.visibility = "hidden"
            self._show_error(exc)
            return
        with self._lock:
            self._gen += 1
            gen = self._gen
            self._done[gen] = threading.Event()
            self._member_choice[gen] = self.member_choice
            for old in [g for g in self._done if g < gen - 8]:
                self._done.pop(old, None)
                self._member_choice.pop(old, None)
        self.progress.value = 0.0
        self.progress.layout.visibility = "visible"
        if background:
            threading.Thread(
                target=self._run, args=(gen, params), daemon=True, name=f"climwidgets-{type(self).__name__}-{gen}"
            ).start()
        else:
            self._run(gen, params)
            self.kernel.drain()

    def compute_now(self):
        """Compute for the current parameters in the calling thread; return ``self.result``."""
        self.refresh(background=False)
        return self.result

    def wait(self, timeout=120):
        """Block until the current computation is done and shown; return ``self.result``.

        If the parameters change while waiting, waits for the newer computation.  Called
        on the kernel's thread, it renders finished results itself while it waits.
        """
        import time

        deadline = time.monotonic() + timeout
        while True:
            gen = self._gen
            event = self._done.get(gen)
            while event is not None and not event.is_set():
                self.kernel.drain()
                if time.monotonic() > deadline:
                    raise TimeoutError(f"{type(self).__name__}: computation still running after {timeout} s")
                event.wait(0.02)
            self.kernel.drain()
            if gen == self._gen:
                return self.result

    def _set_progress(self, gen, fraction):
        if self._is_current(gen):
            self.kernel.call(lambda: self._is_current(gen) and setattr(self.progress, "value", fraction))

    def _compute(self, params, gen):
        """``self.compute(**params)`` computed in one pass, with progress (worker thread)."""
        from ..analyses.run import compute
        from ..scale import CancelledComputation, compute_on_cluster, current_client

        client = current_client()
        if client is None:
            with TaskProgress(lambda f: self._set_progress(gen, f), lambda: self._is_current(gen)):
                (computed,) = compute(self._members_of(self.compute(**params), gen))
            return computed
        try:  # a dask cluster is in use (cw.use_cluster): its progress feeds the same bar
            return compute_on_cluster(
                self._members_of(self.compute(**params), gen),
                client,
                on_progress=lambda f: self._set_progress(gen, f),
                is_current=lambda: self._is_current(gen),
            )
        except CancelledComputation:
            raise Superseded() from None

    def _members_of(self, out, gen):
        """``compute``'s output seen as the member choice of computation ``gen`` (lazy)."""
        if self.member_dim is None:
            return out
        from .members import reduce_members

        choice = self._member_choice.get(gen, self.member_choice)
        return reduce_members(out, choice, self.member_dim, keep=self.member_whole)

    def _run(self, gen, params):
        """Compute in the calling (worker) thread; hand the outcome to the kernel's thread."""
        try:
            computed = self._compute(params, gen)
            with self._finish_lock:
                if not self._is_current(gen):
                    self._finished(gen)
                    return
                result = self.finish(computed, params)
        except Superseded:
            self._finished(gen)
            return
        except KeyboardInterrupt:  # Ctrl-C: stop, say so, stay usable
            self.kernel.call(lambda: self._fail(gen, None))
            if threading.current_thread() is threading.main_thread():
                raise  # compute_now in the kernel's thread: the interrupt reaches the user
            return
        except Exception as exc:  # noqa: BLE001 - shown in the widget (InputError plainly)
            tb = traceback.format_exc()
            self.kernel.call(lambda error=exc: self._fail(gen, error, tb))
            return
        self.kernel.call(lambda: self._deliver(gen, params, result))

    def _deliver(self, gen, params, result):
        """Store and show a finished result (kernel's thread)."""
        try:
            if not self._is_current(gen):
                return
            self.result = result
            if self.error is not None:  # clear an old error, keep plain notes
                self.error = None
                self.message.value = ""
            self._mark_stale(False)
            if self.map is not None and self.member is not None:
                self.map.member_note = self._member_words()["label"]
            self.render(result, params)
        except Exception as exc:  # noqa: BLE001 - a rendering problem is shown, not raised into the loop
            self._fail(gen, exc, traceback.format_exc(), finished=False)
        finally:
            self._finished(gen)

    def _fail(self, gen, exc, tb="", finished=True):
        """Show an error of computation ``gen`` (kernel's thread)."""
        try:
            if not self._is_current(gen):
                return
            if exc is None:
                self.message.value = "Interrupted. Change a setting to compute again."
            elif isinstance(exc, InputError):
                self._show_error(exc)
            else:
                self.error = exc
                self._traceback = tb
                self.message.value = (
                    f"<span style='color:#b30000'>Unexpected problem "
                    f"({html.escape(type(exc).__name__)}): {html.escape(str(exc))}</span>"
                )
        finally:
            if finished:
                self._finished(gen)

    def _finished(self, gen):
        def done():
            if self._is_current(gen):
                self.progress.value = 1.0
                self.progress.layout.visibility = "hidden"
            event = self._done.get(gen)
            if event is not None:
                event.set()

        self.kernel.call(done)

    def _show_error(self, exc, invalidates=True):
        """Show an InputError beside the controls; ``invalidates``: the shown results are out of date."""
        self.error = exc
        self.message.value = f"<span style='color:#b30000'>{html.escape(str(exc))}</span>"
        if invalidates:
            self._mark_stale(True)

    def _result_views(self) -> list:
        return [v for v in (self.map, self.table_html, self.chart) if v is not None]

    def _mark_stale(self, stale: bool):
        """Dim the shown results and hold the exports while an error says they are out of date."""
        shown = stale and self.result is not None
        for view in self._result_views():
            (view.add_class if shown else view.remove_class)("cw-stale")
        for button in self.exports.children:
            button.disabled = shown
        self.stale_note.value = (
            (
                "<div style='color:#b30000;font-size:12px'>The map and table below are for "
                "the previous settings: fix the setting named beside the controls to "
                "update them.</div>"
            )
            if shown
            else ""
        )

    @property
    def stale(self) -> bool:
        """True while an error says the shown results are not those of the current settings."""
        return bool(self.stale_note.value)

    def say(self, text):
        """A plain (escaped) note in the message line."""
        self.message.value = html.escape(text)

    def show_table(self, df: pd.DataFrame | None):
        """Show a DataFrame in the results table and keep it as ``self.table``.

        ``df`` is the table as the analysis shows it (SI); it is shown, and kept as
        ``self.table`` (what the CSV export writes), in the units chosen in the menu.
        """
        self._table_given = df
        df = self.in_units(df)
        self.table = df
        head = ""
        if self.member is not None:
            from .members import caption

            head = caption(self.member.value, self.n_members)
        self.table_html.value = _CSS + head + df_to_html(df)

    def show_chart(self, figure, dpi=100):
        """Show a static matplotlib Figure as a PNG image."""
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
        """Add a button that exports one file via ``write(path)`` and hands it to the browser.

        ``write`` receives a path in a fresh temporary folder under the file's final name;
        it may write companion files beside it (a CSV's metadata file).  Every file
        written there becomes a download link in the page (:attr:`downloads`, the bytes
        inside the link: nothing goes over the network) and, when :attr:`save_copies` is
        true, is also moved atomically into ``export_dir`` under a name not yet taken.
        """
        button = widgets.Button(
            description=label,
            icon="download",
            layout=widgets.Layout(width="auto"),
            tooltip=f"{label}: prepares a download link below",
        )

        def on_click(_):
            try:
                files = self.export_files(write, suffix, stem)
            except InputError as exc:
                self._show_error(exc, invalidates=False)
            except Exception as exc:  # a message in the widget, not a silent failure in a callback
                self._show_error(
                    InputError(
                        f"could not export ({type(exc).__name__}: {exc})",
                        source=str(self.export_dir),
                        fix="check the export folder (widget.export_dir) and try again",
                    ),
                    invalidates=False,
                )
            else:
                self.offer_downloads(files)
                saved = self.last_saved
                where = f"; a copy is in {saved[0].parent}" if saved else ""
                self.say(f"Ready: click the link{'s' if len(files) > 1 else ''} above to download{where}.")

        button.on_click(on_click)
        self.exports.children = (*self.exports.children, button)
        return button

    # ------------------------------------------------------------ exports
    save_copies = True  # also keep every export in export_dir (beside the notebook)

    def export_tag(self) -> str:
        """Settings and basin set for export file names, e.g. ``jul-aug_1991-2020_3-basins``."""
        try:
            params = self.parameters()
        except Exception:  # noqa: BLE001 - a name is no place to report a bad control
            params = {}
        parts = []
        months = params.get("months")
        if isinstance(months, (list, tuple)) and months and all(isinstance(m, int) for m in months):
            from ..compute._time import MONTH_NAMES

            parts.append(f"{MONTH_NAMES[months[0] - 1][:3]}-{MONTH_NAMES[months[-1] - 1][:3]}".lower())
        for key in ("baseline", "years"):
            span = params.get(key)
            if isinstance(span, (list, tuple)) and len(span) == 2:
                parts.append(f"{span[0]}-{span[1]}")
        if self.basin_set is not None and len(self.basin_set):
            parts.append(f"{len(self.basin_set)}-basins")
        if getattr(self, "member", None) is not None:
            parts.append(self._member_words()["tag"])
        if self.unit_system != "SI":
            parts.append("us-units")
        return "_".join(parts)

    def export_name(self, stem, suffix) -> str:
        """File name saying what it is: analysis, settings, basin set and date."""
        from datetime import date

        tag = self.export_tag()
        return "_".join(p for p in (stem or self.export_stem, tag, date.today().strftime("%Y%m%d")) if p) + f".{suffix}"

    def export_files(self, write, suffix, stem=None) -> dict:
        """Run ``write`` now; returns ``{file name: bytes}`` of what it wrote (and saves copies)."""
        import tempfile

        name = self.export_name(stem, suffix)
        with tempfile.TemporaryDirectory(prefix="climwidgets-export-") as tmp:
            write(Path(tmp) / name)
            written = sorted(Path(tmp).iterdir(), key=lambda p: (p.name != name, p.name))
            if not written or written[0].name != name:
                raise InputError(
                    f"the export wrote no {name}", source=type(self).__name__, fix="report this as a bug of the widget"
                )
            files = {p.name: p.read_bytes() for p in written}
        self.last_saved = self._save_copies(files) if self.save_copies else []
        return files

    def _save_copies(self, files: dict) -> list:
        """Move ``files`` into ``export_dir`` atomically; companions keep the main file's new stem."""
        first = next(iter(files))
        folder = self.export_dir
        folder.mkdir(parents=True, exist_ok=True)
        main = unique_path(folder, first)
        while any((folder / (main.name + n[len(first) :])).exists() for n in files if n != first):
            main = unique_path(folder, main.stem + "-x" + main.suffix)
        saved = []
        for n, data in files.items():
            target = folder / (main.name + n[len(first) :]) if n != first else main

            def write(tmp: Path, data: bytes = data) -> None:
                tmp.write_bytes(data)

            saved.append(atomic_write(target, False, write, f"{type(self).__name__} export"))
        return saved

    def offer_downloads(self, files: dict):
        """Show a download link per file; the bytes travel inside the link (no network)."""
        import base64
        import mimetypes

        links = []
        for n, data in files.items():
            mime = (
                "application/json"
                if n.endswith(".json")
                else (mimetypes.guess_type(n)[0] or "application/octet-stream")
            )
            href = f"data:{mime};base64,{base64.b64encode(data).decode('ascii')}"
            links.append(
                f"<a class='cw-download' download='{html.escape(n, quote=True)}' href='{href}' "
                f"style='margin-right:14px'>&#x2B07; {html.escape(n)}</a>"
                f" <small>({len(data) / 1024:.1f} kB)</small>"
            )
        self.downloads.value = "<div style='margin:4px 0'>" + " ".join(links) + "</div>"

    def export(self, write, suffix, stem=None):
        """Write one export now into ``export_dir``; returns its path."""
        keep = self.save_copies
        self.save_copies = True
        try:
            self.export_files(write, suffix, stem)
        finally:
            self.save_copies = keep
        return self.last_saved[0]

    def csv_provenance(self) -> dict:
        """Settings and inputs that travel with this widget's CSV (its metadata file)."""
        try:
            params = self.parameters()
        except Exception:  # noqa: BLE001 - the CSV of the current table, settings unknown
            params = {}
        clean = {}
        for key, value in params.items():
            if key == "basins":
                value = [getattr(b, "name", str(b)) for b in (value or [])]
            elif hasattr(value, "dims"):
                continue
            clean[key] = value
        if getattr(self, "member", None) is not None:
            clean["ensemble_member"] = self._member_words()["description"]
        clean["units"] = UNIT_SYSTEMS[self.unit_system]
        pr = getattr(self, "pr", None)
        source = getattr(pr, "encoding", {}).get("source") if pr is not None else None
        return {"title": self.title or self.export_stem, "parameters": clean, "inputs": [source] if source else None}

    def write_table_csv(self, table, path, provenance=None, float_format=None):
        """Write ``table`` and its metadata with the package's one CSV writer."""
        from ..report.tables import csv_files

        files = csv_files(table, Path(path).name, provenance or self.csv_provenance(), float_format=float_format)
        for n, data in files.items():
            (Path(path).parent / n).write_bytes(data)

    def _write_csv(self, path):
        if self.table is None:
            raise InputError(
                "there is no table to export yet", source=type(self).__name__, fix="wait for the computation to finish"
            )
        self.write_table_csv(self.table, path)
