"""A drawing page replays only the recorded entities that meet its box.

Reference: the page without the window (every record replayed); the PDF form is
clipped to its box, so the records left out are exactly those wholly outside it (each
record's own bounding box, grown by the margin for line widths), and those inside are
replayed as before, in the same order."""

from __future__ import annotations

from typing import ClassVar

import ezdxf
from reportlab.pdfgen import canvas as rl_canvas

from dxftruss.report import render
from dxftruss.report.render import PageMap, draw_recording, record_drawing


class Spy(render.ReportlabBackend):
    """The handles of the lines a replay draws, in order."""

    drawn: ClassVar[list[str]] = []

    def draw_line(self, start, end, properties):  # type: ignore[no-untyped-def]
        Spy.drawn.append(properties.handle)
        super().draw_line(start, end, properties)


def _doc():
    doc = ezdxf.new("R2018")
    msp = doc.modelspace()
    handles = {}
    # a row of short lines 0..1000 along x, and one long line crossing the whole row
    for k in range(100):
        handles[k] = msp.add_line((10.0 * k, 0.0), (10.0 * k + 6.0, 4.0)).dxf.handle
    handles["long"] = msp.add_line((-5000.0, 2.0), (5000.0, 3.0)).dxf.handle
    return doc, handles


def _replay(recording, pm, window, monkeypatch):  # type: ignore[no-untyped-def]
    Spy.drawn = []
    monkeypatch.setattr(render, "ReportlabBackend", Spy)
    c = rl_canvas.Canvas("/dev/null", pagesize=(400.0, 300.0))
    draw_recording(c, recording, pm, window=window)
    return list(Spy.drawn)


def test_a_zoomed_page_replays_what_it_shows(monkeypatch) -> None:
    doc, h = _doc()
    rec = record_drawing(doc)
    # 2 points per drawing unit: the page (400 x 300 pt) shows x in [100, 300] of the row
    pm = PageMap(origin=(100.0, -50.0), scale=2.0, offset=(0.0, 0.0))
    everything = _replay(rec, pm, None, monkeypatch)
    shown = _replay(rec, pm, (0.0, 0.0, 400.0, 300.0), monkeypatch)
    assert len(everything) == 101
    # kept: lines whose box comes within the margin (12 pt = 6 units) of x in [100, 300]
    expect = [h[k] for k in range(100) if 10.0 * k + 6.0 >= 94.0 and 10.0 * k <= 306.0] + [h["long"]]
    assert sorted(shown) == sorted(expect)
    assert shown == [x for x in everything if x in set(expect)]  # same order
    # a page that shows everything replays everything (the recording's own player)
    wide = PageMap(origin=(-6000.0, -50.0), scale=0.02, offset=(0.0, 0.0))
    assert _replay(rec, wide, (0.0, 0.0, 400.0, 300.0), monkeypatch) == _replay(rec, wide, None, monkeypatch)
