"""widgets/entry.py: typed entry boxes linked both ways to their sliders."""

import ipywidgets as widgets

from climwidgets.widgets.entry import number_entry, step_entry, year_range_entry


def test_number_entry_links_both_ways():
    slider = widgets.FloatSlider(value=90.0, min=0.0, max=360.0, step=0.5)
    box = number_entry(slider)
    assert isinstance(box, widgets.BoundedFloatText) and (box.min, box.max) == (0.0, 360.0)
    box.value = 123.5
    assert slider.value == 123.5
    slider.value = 10.0
    assert box.value == 10.0
    assert isinstance(number_entry(widgets.IntSlider(value=3, max=10)), widgets.BoundedIntText)


def test_year_range_entry_links_both_ways_and_keeps_the_range_ordered():
    slider = widgets.IntRangeSlider(value=(1991, 2020), min=1950, max=2023)
    first, last = year_range_entry(slider)
    changes = []
    slider.observe(changes.append, names="value")
    first.value = 1981
    assert slider.value == (1981, 2020) and len(changes) == 1  # one typed value, one change
    last.value = 1970  # typed before the first year: the pair is swapped
    assert slider.value == (1970, 1981)
    slider.value = (2000, 2010)
    assert (first.value, last.value) == (2000, 2010)


def test_step_entry_types_steps_and_refuses_unknown_ones():
    slider = widgets.SelectionSlider(options=["2010-01", "2010-02", "2010-03"], value="2010-02")
    message = widgets.HTML()
    box, prev, nxt = step_entry(slider, message)
    box.value = "2010-03"
    assert slider.value == "2010-03" and message.value == ""
    box.value = "2011-07"
    assert slider.value == "2010-03" and "2010-01 to 2010-03" in message.value
    prev.click()
    assert slider.value == "2010-02" and box.value == "2010-02"
    nxt.click()
    nxt.click()  # already at the last step: stays there
    assert slider.value == "2010-03"
