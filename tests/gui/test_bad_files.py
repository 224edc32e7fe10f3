"""The window's loaders and typed values refuse nonsense with one sentence and lose nothing (issue 15).

Each bad file is opened over the demo ring with four marks: open_path returns False, the
window shows one sentence, and the image and marks that were there are still there.
"""

from __future__ import annotations

import json
import struct
import zlib

import numpy as np
import pytest

pytest.importorskip("PySide6")
from astropy.io import fits

from tests.gui.conftest import REPO, demo_field, type_into, wait_idle


def _png_header_only(width, height):
    """A PNG declaring width x height grey pixels (PNG spec, W3C 2003: signature, IHDR, IDAT, IEND)."""
    def chunk(kind, data):
        return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data))

    ihdr = struct.pack(">IIBBBBB", width, height, 8, 0, 0, 0, 0)
    return b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr) + chunk(b"IDAT", zlib.compress(b"\0" * 64)) + chunk(b"IEND", b"")


def _bad_files(tmp_path, ring):
    base = json.loads((REPO / "resources" / "demo_ring_a.lensmass.json").read_text())
    base["image"]["path"] = str(ring)
    base["image"].pop("absolute_path", None)
    files = {}

    def put(name, text=None, data=None, phrase=""):
        p = tmp_path / name
        if data is not None:
            p.write_bytes(data)
        else:
            p.write_text(text)
        files[name] = (p, phrase)

    put("bomb.png", data=_png_header_only(30000, 30000), phrase="decompression bomb")
    put("deep.lensmass.json", '{"a":' * 100_000 + "1" + "}" * 100_000, phrase="nested too deeply")
    put("huge_mc.lensmass.json", json.dumps(dict(base, mc_samples=10**12)), phrase="mc_samples")
    put("far.lensmass.json", json.dumps(dict(base, centre={"x": -1e9, "y": 5.0, "how": "hand"})), phrase="outside")
    put("empty.fits", "", phrase="empty")
    put("text.fits", "not FITS\n" * 50, phrase="not a valid FITS")
    put("trunc.fits", data=ring.read_bytes()[:5000], phrase="truncated")
    fits.PrimaryHDU(np.full((10, 10), np.nan, np.float32)).writeto(tmp_path / "nan.fits")
    files["nan.fits"] = (tmp_path / "nan.fits", "NaN")
    (tmp_path / "folder.fits").mkdir()
    files["folder.fits"] = (tmp_path / "folder.fits", "folder")
    return files


def test_bad_files_are_one_sentence_and_keep_the_open_work(qtbot, ring_window, tmp_path):
    window, truth = ring_window
    ring, _ = demo_field("tris_ring_a")
    for x, y in truth["arc_points_xy"][::8][:4]:
        window.model.add_mark("point", 0, (x, y))
    window.model.dirty = False
    n_before = len(window.model.active_system.points)
    tally = []
    for name, (path, phrase) in _bad_files(tmp_path, ring).items():
        assert window.open_path(str(path)) is False, name
        text = window.last_error
        assert text and "\n" not in text and phrase.lower() in text.lower(), (name, text)
        assert "Traceback" not in text and "internal" not in text.lower()
        assert window.canvas.has_image and len(window.model.active_system.points) == n_before, name
        tally.append(name)
    assert len(tally) == 9


@pytest.mark.parametrize("field,text,phrase", [
    ("z_l", "2000", "behind the lens"),
    ("z_s", "5000", "1100"),
    ("z_l", "inf", ""),
    ("z_s", "0.1", "behind the lens"),
    ("h0", "1e6", "H0"),
    ("ode0", "2.5", "big bang"),
    ("concentration_value", "1e9", "concentration"),
])
def test_typed_nonsense_is_a_sentence_where_it_is_typed(qtbot, ring_window, field, text, phrase):
    window, truth = ring_window
    for x, y in truth["arc_points_xy"][::6]:
        window.model.add_mark("point", 0, (x, y))
    type_into(qtbot, window, "z_l", str(truth["z_l"]))
    type_into(qtbot, window, "z_s", str(truth["z_s"]))
    if field in ("h0", "ode0"):
        window.model.set_choice(cosmology="custom")
        window.model.set_texts({"h0": "70", "om0": "0.1" if field == "ode0" else "0.3"})
    if field == "concentration_value":
        window.model.set_choice(concentration="fixed")
    window.model.set_text(field, text)
    wait_idle(qtbot, window)
    status = window.results_panel.status.text()
    assert status and "\n" not in status and phrase.lower() in status.lower(), status
    assert window.results_panel.values["mass_einstein_msun"].text() == "–"  # no confident number


def test_stored_marks_off_the_image_are_refused_and_change_nothing(qtbot, ring_window):
    window, truth = ring_window
    window.model.add_mark("point", 0, tuple(truth["arc_points_xy"][0]))
    state = window.model.to_session().to_dict()
    state["arcs"][0]["points"] = [[5000.0, 5000.0]]
    assert window.restore_marks(state) is False
    assert "outside the 100 x 100 image" in window.last_message and "\n" not in window.last_message
    assert window.model.active_system.points == [tuple(truth["arc_points_xy"][0])]
