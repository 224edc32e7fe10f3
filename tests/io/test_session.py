"""Session files: round trip, relative image paths, refusal of bad files, atomic saves, autosave.

Outside references: the JSON grammar of RFC 8259 (via Python's json module) for what counts as a
complete file; the POSIX rename(2) guarantee behind os.replace for atomic saves (common practice).
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from lensmass.core.errors import LensInputError
from lensmass.io import session as sess
from lensmass.io.session import (
    ArcSystem,
    CosmologyChoice,
    DisplaySettings,
    ImageRef,
    LensCentre,
    Session,
    discard_autosave,
    list_recoverable,
    load_autosave,
    load_session,
    migrate,
    save_session,
    write_autosave,
)


def _full_session(image: Path | None = None) -> Session:
    """Every field away from its default (an invented field of the invented Kestrel survey)."""
    return Session(
        image=ImageRef(str(image) if image else None, hdu="SCI", plane=2, pixel_scale_arcsec=0.065),
        display=DisplaySettings(stretch="log", limits="manual", manual_limits=(-0.5, 12.0), colormap="magma",
                                invert=True, layer="residual"),
        centre=LensCentre(101.25, 98.5, "found"),
        z_l=0.412,
        z_l_err=0.003,
        cosmology=CosmologyChoice(preset=None, h0=70.0, om0=0.3, ode0=0.7),
        concentration=4.5,
        halo_definition="vir",
        mc_samples=2500,
        mc_seed=11,
        arcs=[
            ArcSystem("A", z_s=1.734, z_s_err=0.01, shape="ellipse", points=[(80.5, 90.0), (120.0, 110.25)],
                      images=[(79.0, 91.0)], fit={"radius_px": 24.1, "centre": [101.2, 98.6]}),
            ArcSystem("B", z_s=None, z_s_range=(1.0, 3.0), points=[(60.0, 60.0)]),
        ],
        ring={"radius_px": 23.9, "snr": 14.2},
        notes="Kestrel field K-17: bright arc to the north-east; ünïcode kept.",
        panels={"shear": {"catalogue": "k17_shapes.ecsv", "bins": 8}, "light": {}},
    )


def _digest(path: Path) -> tuple[str, int]:
    return hashlib.sha256(path.read_bytes()).hexdigest(), path.stat().st_mtime_ns


def _one_sentence(message: str) -> None:
    assert "\n" not in message and "Traceback" not in message
    assert message.endswith(".") and len(message) < 320


def test_round_trip_in_memory_and_on_disk(tmp_path):
    image = tmp_path / "frames" / "k17.fits"
    image.parent.mkdir()
    image.write_bytes(b"SIMPLE  =                    T")
    s = _full_session(image)
    assert Session.from_dict(s.to_dict(tmp_path), tmp_path) == s
    out = save_session(tmp_path / "k17.lensmass.json", s)
    back = load_session(out)
    assert back == s
    data = json.loads(out.read_text(encoding="utf-8"))
    assert data["format"] == "lensmass-session" and data["schema"] == sess.SCHEMA_VERSION
    assert data["image"]["path"] == "frames/k17.fits"  # relative, POSIX separators
    assert data["image"]["absolute_path"] == str(image)


def test_defaults_round_trip_and_estimate_kwargs():
    s = Session(z_l=0.3, arcs=[ArcSystem("A", z_s=1.0)])
    assert Session.from_dict(json.loads(sess.session_json(s))) == s
    kw = s.estimate_kwargs("A")
    assert kw["z_l"] == 0.3 and kw["z_s"] == 1.0 and kw["z_s_range"] is None
    assert kw["cosmology"].name == "Planck18"  # the default preset of astropy's (common practice)
    with pytest.raises(LensInputError, match="no arc system named"):
        s.estimate_kwargs("Z")
    unknown = Session(z_l=0.3, arcs=[ArcSystem("B", z_s_range=(1.0, 2.0))])
    assert unknown.estimate_kwargs(0)["z_s_range"] == (1.0, 2.0)


def test_relative_image_path_survives_moving_the_folder(tmp_path):
    project = tmp_path / "observing_run"
    (project / "img").mkdir(parents=True)
    image = project / "img" / "k17_f814.fits"
    image.write_bytes(b"fake fits bytes")
    save_session(project / "k17.lensmass.json", Session(image=ImageRef(str(image)), z_l=0.4))
    moved = tmp_path / "archive" / "run_copy"
    moved.parent.mkdir()
    shutil.move(str(project), str(moved))
    s = load_session(moved / "k17.lensmass.json")
    assert Path(s.image.path) == moved / "img" / "k17_f814.fits"
    assert s.image.exists()


def test_absolute_hint_is_used_when_only_the_session_moves(tmp_path):
    image = tmp_path / "data" / "k17.fits"
    image.parent.mkdir()
    image.write_bytes(b"x")
    (tmp_path / "a").mkdir()  # saving makes no folders (issue 15)
    save_session(tmp_path / "a" / "s.lensmass.json", Session(image=ImageRef(str(image))))
    (tmp_path / "elsewhere" / "deeper").mkdir(parents=True)
    target = tmp_path / "elsewhere" / "deeper" / "s.lensmass.json"
    shutil.move(str(tmp_path / "a" / "s.lensmass.json"), str(target))
    assert Path(load_session(target).image.path) == image


def test_missing_image_still_loads_the_session(tmp_path):
    save_session(tmp_path / "s.json", Session(image=ImageRef(str(tmp_path / "gone.fits")), z_l=0.2))
    s = load_session(tmp_path / "s.json")
    assert s.z_l == 0.2 and not s.image.exists()


def test_unknown_keys_are_kept(tmp_path):
    data = Session(z_l=0.3).to_dict()
    data["future_block"] = {"colour": "teal"}
    path = tmp_path / "s.json"
    path.write_text(json.dumps(data))
    s = load_session(path)
    save_session(path, s)
    assert json.loads(path.read_text())["future_block"] == {"colour": "teal"}


GOOD = Session(z_l=0.3, arcs=[ArcSystem("A", z_s=1.2, points=[(1.0, 2.0)])])


def _bad_files():
    good = sess.session_json(GOOD)
    newer = json.loads(good)
    newer["schema"] = sess.SCHEMA_VERSION + 1
    wrong_tag = json.loads(good)
    wrong_tag["format"] = "some-other-program"
    no_tag = json.loads(good)
    del no_tag["format"]
    bad_type = json.loads(good)
    bad_type["arcs"][0]["z_s"] = "one point two"
    bad_points = json.loads(good)
    bad_points["arcs"][0]["points"] = [[1.0]]
    bad_bool = json.loads(good)
    bad_bool["display"]["invert"] = "yes"
    huge = sess.session_json(GOOD).replace('"z_l": 0.3', '"z_l": 1' + "0" * 400)
    return {
        "truncated": (good[: len(good) // 2].encode(), "ends too early"),
        "cut_in_a_string": (good[: good.index('"lensmass-session"') + 5].encode(), "ends too early"),
        "garbage": (b"{ this is not json at all ]\n" + b"x" * 50, "not valid JSON"),
        "empty": (b"", "empty"),
        "binary": (b"\x89PNG\r\n\x1a\n\x00\x00\xff\xfe", "not a text file"),
        "json_list": (b"[1, 2, 3]", "not a lensmass session"),
        "newer": (json.dumps(newer).encode(), "made by a newer lensmass"),
        "wrong_tag": (json.dumps(wrong_tag).encode(), "not a lensmass session"),
        "no_tag": (json.dumps(no_tag).encode(), "has no format tag"),
        "bad_type": (json.dumps(bad_type).encode(), "arcs\\[0\\].z_s"),
        "bad_points": (json.dumps(bad_points).encode(), "arcs\\[0\\].points\\[0\\]"),
        "bad_bool": (json.dumps(bad_bool).encode(), "display.invert"),
        "huge_integer": (huge.encode(), "'z_l'"),
    }


@pytest.mark.parametrize("case", sorted(_bad_files()))
def test_bad_files_give_one_sentence_and_stay_untouched(tmp_path, case):
    raw, expected = _bad_files()[case]
    path = tmp_path / f"{case}.lensmass.json"
    path.write_bytes(raw)
    before = _digest(path)
    with pytest.raises(LensInputError, match=expected) as info:
        load_session(path)
    _one_sentence(str(info.value))
    assert _digest(path) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == [path.name]


def test_newer_schema_message_says_update(tmp_path):
    data = GOOD.to_dict()
    data["schema"] = 7
    path = tmp_path / "new.json"
    path.write_text(json.dumps(data))
    with pytest.raises(LensInputError, match="update lensmass to open it"):
        load_session(path)


def test_missing_file(tmp_path):
    with pytest.raises(LensInputError, match="does not exist") as info:
        load_session(tmp_path / "nowhere.lensmass.json")
    _one_sentence(str(info.value))


def _fake_v0():
    # An invented earlier layout: flat keys, lens redshift under another name, no arcs list.
    return {"format": "lensmass-session", "schema": 0, "image_file": "k17.fits", "lens_z": 0.5,
            "arc_points": [[1, 2], [3, 4], [5, 6]], "source_z": 2.0}


def _v0_to_v1(d: dict) -> dict:
    out = {k: v for k, v in d.items() if k not in ("image_file", "lens_z", "arc_points", "source_z")}
    out.update({"schema": 1, "image": {"path": d["image_file"]}, "z_l": d["lens_z"],
                "arcs": [{"name": "A", "z_s": d["source_z"], "points": d["arc_points"]}]})
    return out


def test_migration_hook_upgrades_a_v0_dict(tmp_path, monkeypatch):
    old = _fake_v0()
    snapshot = json.dumps(old)
    new = migrate(old, migrations={0: _v0_to_v1}, oldest=0)
    assert json.dumps(old) == snapshot  # input untouched
    assert new["schema"] == 1 and new["z_l"] == 0.5
    # Through the real loader, with the hook registered.
    monkeypatch.setitem(sess.MIGRATIONS, 0, _v0_to_v1)
    monkeypatch.setattr(sess, "OLDEST_SCHEMA", 0)
    path = tmp_path / "old.json"
    path.write_text(snapshot)
    s = load_session(path)
    assert s.z_l == 0.5 and s.arcs[0].points == [(1.0, 2.0), (3.0, 4.0), (5.0, 6.0)]
    assert Path(s.image.path) == tmp_path / "k17.fits"
    assert path.read_text() == snapshot


def test_damaged_v0_fails_in_one_sentence():
    broken = _fake_v0()
    del broken["lens_z"]
    with pytest.raises(LensInputError, match="lacks what that schema needs") as info:
        migrate(broken, migrations={0: _v0_to_v1}, oldest=0)
    _one_sentence(str(info.value))


def test_v0_without_a_migration_is_refused_clearly(tmp_path):
    with pytest.raises(LensInputError, match="older than this lensmass can read") as info:
        migrate(_fake_v0())
    _one_sentence(str(info.value))
    with pytest.raises(LensInputError, match="cannot convert"):
        migrate(_fake_v0(), migrations={}, oldest=0)


def test_failed_replace_leaves_the_old_file_intact(tmp_path, monkeypatch):
    path = tmp_path / "s.lensmass.json"
    save_session(path, GOOD)
    before = _digest(path)

    def broken_replace(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr("lensmass.io.atomic.os.replace", broken_replace)
    with pytest.raises(LensInputError, match="previous file there is unchanged") as info:
        save_session(path, _full_session())
    _one_sentence(str(info.value))
    assert _digest(path) == before
    assert [p.name for p in tmp_path.iterdir()] == [path.name]  # no temporary left behind


def test_unserialisable_panel_state_is_refused_before_writing(tmp_path):
    path = tmp_path / "s.lensmass.json"
    save_session(path, GOOD)
    before = _digest(path)
    bad = Session(panels={"shear": {"handle": object()}})
    with pytest.raises(LensInputError, match="cannot be written as JSON"):
        save_session(path, bad)
    assert _digest(path) == before


def test_serialiser_failing_midway_leaves_the_old_file_intact(tmp_path, monkeypatch):
    path = tmp_path / "s.lensmass.json"
    save_session(path, GOOD)
    before = _digest(path)
    real_write = Path.write_text

    def half_write(self, text, *args, **kwargs):
        real_write(self, text[: len(text) // 3], *args, **kwargs)
        raise OSError(5, "Input/output error")

    monkeypatch.setattr(Path, "write_text", half_write)
    with pytest.raises(LensInputError):
        save_session(path, _full_session())
    monkeypatch.undo()
    assert _digest(path) == before
    assert load_session(path) == GOOD


# --------------------------------------------------------------- autosave


@pytest.fixture
def data_dir(tmp_path, monkeypatch):
    folder = tmp_path / "userdata"
    monkeypatch.setenv(sess.DATA_DIR_ENV, str(folder))
    return folder


def test_autosave_dir_follows_the_environment(data_dir):
    assert sess.autosave_dir() == data_dir / "autosave"


def test_autosave_of_a_live_window_is_not_offered(data_dir):
    key = sess.new_autosave_key()
    path = write_autosave(_full_session(), key, origin=data_dir / "k17.lensmass.json")
    assert path.parent == data_dir / "autosave"
    assert list_recoverable() == []  # this process is alive
    listed = list_recoverable(include_running=True)
    assert [r.key for r in listed] == [key]
    assert listed[0].origin == str(data_dir / "k17.lensmass.json")
    assert load_autosave(key) == _full_session()
    discard_autosave(key)
    discard_autosave(key)  # already gone: no error
    assert list_recoverable(include_running=True) == []


def _crashing_run(data_dir: Path, key: str, image: str, saved_at: str | None = None) -> None:
    """A separate process writes an autosave and dies without discarding it."""
    code = textwrap.dedent(f"""
        import json, os
        from lensmass.io.session import Session, ImageRef, write_autosave
        p = write_autosave(Session(image=ImageRef({image!r}), z_l=0.25), {key!r})
        if {saved_at!r}:
            d = json.loads(p.read_text()); d["saved_at"] = {saved_at!r}; p.write_text(json.dumps(d))
        os._exit(1)
    """)
    env = dict(os.environ, **{sess.DATA_DIR_ENV: str(data_dir)})
    subprocess.run([sys.executable, "-c", code], env=env, check=False, timeout=60)


def test_autosaves_of_crashed_runs_are_listed_newest_first(data_dir, tmp_path):
    _crashing_run(data_dir, "older-run", str(tmp_path / "k12.fits"), saved_at="2026-11-30T08:00:00")  # no zone: UTC
    _crashing_run(data_dir, "newer-run", str(tmp_path / "k17.fits"))
    write_autosave(GOOD, "this-window")
    (sess.autosave_dir() / "broken.autosave.json").write_text('{"format": "lensm')  # skipped, not fatal
    found = list_recoverable()
    assert [r.key for r in found] == ["newer-run", "older-run"]
    assert [r.image_name for r in found] == ["k17.fits", "k12.fits"]
    assert found[0].saved_at > found[1].saved_at
    assert load_autosave("newer-run").z_l == 0.25
    discard_autosave("newer-run")
    assert [r.key for r in list_recoverable()] == ["older-run"]


def test_bad_autosave_key(data_dir):
    with pytest.raises(LensInputError, match="not a valid autosave key"):
        write_autosave(GOOD, "../escape")


def test_fingerprint_tracks_content_not_save_time(tmp_path):
    a = Session(z_l=0.3, arcs=[ArcSystem("A", z_s=1.0, points=[[1, 2]])])
    b = Session(z_l=0.3, arcs=[ArcSystem("A", z_s=1.0, points=[(1.0, 2.0)])])
    assert a.fingerprint() == b.fingerprint()  # lists or tuples, ints or floats: same content
    saved = load_session(save_session(tmp_path / "s.json", a))
    assert saved.fingerprint() == a.fingerprint()
    saved.arcs[0].points.append((3.0, 4.0))
    assert saved.fingerprint() != a.fingerprint()


def test_migration_cannot_alter_the_callers_dict():
    old = _fake_v0()
    old["nested"] = {"keep": [1, 2]}

    def rude_step(d):
        d["nested"]["keep"].append(3)
        return _v0_to_v1(d)

    migrate(old, migrations={0: rude_step}, oldest=0)
    assert old["nested"] == {"keep": [1, 2]}
