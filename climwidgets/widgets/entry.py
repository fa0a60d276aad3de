"""Typed entry beside sliders whose range is too large to hit a value by dragging.

A slider of 300 px over 360° or 480 months moves several values per pixel; these helpers
put a number box, two year boxes or a 'YYYY-MM' box with previous/next buttons beside it.
The slider stays the one control the widget watches: a typed value sets the slider (one
change, so one computation), and moving the slider rewrites the box (an equal value sets
nothing, so no second computation).  The links live in the kernel (``observe`` both ways)
rather than in the browser (``jslink``), so that they also hold in tests and in scripts.
"""

from __future__ import annotations

import ipywidgets as widgets

__all__ = ["number_entry", "year_range_entry", "step_entry"]

_BOX = widgets.Layout(width="72px")


def number_entry(slider, width: str = "72px"):
    """A number box linked both ways to ``slider`` (same bounds and step).

    Returns the box; put it beside the slider (``widgets.HBox([slider, box])``).
    """
    cls = widgets.BoundedIntText if isinstance(slider, widgets.IntSlider) else widgets.BoundedFloatText
    box = cls(
        value=slider.value,
        min=slider.min,
        max=slider.max,
        step=slider.step,
        layout=widgets.Layout(width=width),
        tooltip=f"type a value ({slider.min:g}-{slider.max:g})",
    )
    widgets.link((box, "value"), (slider, "value"))
    return box


def year_range_entry(slider):
    """Two year boxes (first, last) linked both ways to an ``IntRangeSlider`` of years.

    A first year typed after the last (or the reverse) swaps the two, so the range stays
    ordered.  Returns ``(first_box, last_box)``.
    """
    lo, hi = slider.value
    first = widgets.BoundedIntText(value=lo, min=slider.min, max=slider.max, layout=_BOX, tooltip="first year")
    last = widgets.BoundedIntText(value=hi, min=slider.min, max=slider.max, layout=_BOX, tooltip="last year")

    busy = []  # set while the slider rewrites the boxes: half-updated pairs are not typed values

    def typed(_):
        if busy:
            return
        a, b = int(first.value), int(last.value)
        pair = (min(a, b), max(a, b))
        if tuple(slider.value) != pair:
            slider.value = pair

    def moved(change):
        a, b = change["new"]
        busy.append(True)
        try:
            first.value, last.value = int(a), int(b)
        finally:
            busy.pop()

    first.observe(typed, names="value")
    last.observe(typed, names="value")
    slider.observe(moved, names="value")
    return first, last


def step_entry(slider, message=None):
    """A 'YYYY-MM' (or 'YYYY') box and previous/next buttons for a ``SelectionSlider``.

    A label typed that is not among the slider's options leaves the slider where it is
    and says so in ``message`` (an HTML widget), with the first and last labels.
    Returns ``(box, previous_button, next_button)``.
    """
    box = widgets.Text(
        value=str(slider.value),
        placeholder="YYYY-MM",
        continuous_update=False,
        layout=widgets.Layout(width="90px"),
        tooltip="type a step such as 2010-07",
    )
    prev = widgets.Button(icon="chevron-left", tooltip="previous step", layout=widgets.Layout(width="34px"))
    nxt = widgets.Button(icon="chevron-right", tooltip="next step", layout=widgets.Layout(width="34px"))

    def say(text):
        if message is not None:
            message.value = text

    def typed(change):
        text = str(change["new"]).strip()
        options = list(slider.options)
        if text == str(slider.value):
            return
        if text in options:
            say("")
            slider.value = text
        else:
            first, last = (options[0], options[-1]) if options else ("-", "-")
            say(
                f"<small style='color:#a11'>{text!r} is not a step of the record: type a step from "
                f"{first} to {last} in the same form.</small>"
            )

    def moved(change):
        box.value = str(change["new"])

    def shift(by):
        options = list(slider.options)
        if slider.value in options:
            i = min(max(options.index(slider.value) + by, 0), len(options) - 1)
            slider.value = options[i]

    box.observe(typed, names="value")
    slider.observe(moved, names="value")
    prev.on_click(lambda _: shift(-1))
    nxt.on_click(lambda _: shift(+1))
    return box, prev, nxt
