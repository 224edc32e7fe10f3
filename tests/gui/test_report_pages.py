"""The exported report covers every arc system: one page each in one PDF (one PNG file each), and a system
left out for want of a result is named on the first page with the reason.

Outside reference: a PDF page object is a dictionary with ``/Type /Page`` (ISO 32000-1, sec. 7.7.3.3);
the page tree's own dictionary is ``/Type /Pages``, which the count below leaves out.
"""

from __future__ import annotations

import re

import pytest

pytest.importorskip("PySide6")
from PySide6.QtCore import Qt  # noqa: E402

from tests.gui.conftest import click_image, type_into, wait_idle  # noqa: E402


def _pdf_pages(path) -> int:
    return len(re.findall(rb"/Type\s*/Page(?![a-zA-Z])", path.read_bytes()))


def test_every_arc_system_gets_a_page(qtbot, ring_window, tmp_path, monkeypatch):
    from lensmass.io import report

    w, truth = ring_window
    ring = truth["arc_points_xy"]
    for x, y in ring[:: max(1, len(ring) // 12)]:
        click_image(qtbot, w, x, y)
    type_into(qtbot, w, "z_l", str(truth["z_l"]))
    type_into(qtbot, w, "z_s", str(truth["z_s"]))
    qtbot.mouseClick(w.add_system_button, Qt.LeftButton)  # system B: the same ring, fewer clicks, another z_s
    for x, y in ring[:: max(1, len(ring) // 6)]:
        click_image(qtbot, w, x, y)
    type_into(qtbot, w, "z_s", "2.0")
    qtbot.mouseClick(w.add_system_button, Qt.LeftButton)  # system C: one click, no result
    click_image(qtbot, w, *ring[0])
    wait_idle(qtbot, w)
    qtbot.waitUntil(lambda: all(d.result is not None for d in w.model.derived[:2]), timeout=30000)
    names = [s.name for s in w.model.systems]
    masses = [d.result["mass_einstein_msun"] for d in w.model.derived[:2]]
    assert masses[0] != masses[1]  # two systems, two answers (B's source is farther: a smaller mass)

    pages: list[list[str]] = []
    original = report.report_figure

    def spy(*args, **kwargs):
        fig = original(*args, **kwargs)
        pages.append([kwargs.get("subtitle", "")] + [t.get_text() for ax in fig.axes for t in ax.texts])
        return fig

    monkeypatch.setattr(report, "report_figure", spy)
    pdf = w.export_report(str(tmp_path / "night.pdf"))
    assert pdf is not None and _pdf_pages(pdf) == 2
    assert pages[0][0] == f"arc system {names[0]} (page 1 of 2)"
    assert pages[1][0] == f"arc system {names[1]} (page 2 of 2)"
    assert "2" in pages[1]  # system B's own z_s on its page
    first_notes = " ".join(pages[0])
    assert f"Arc system {names[2]} is not in this report" in first_notes
    assert "Report written to night.pdf (2 pages: 2 arc systems)" in w.last_message

    png = w.export_report(str(tmp_path / "night.png"))
    assert png == tmp_path / "night.png" and (tmp_path / "night-2.png").is_file()
    assert not (tmp_path / "night-3.png").exists()
