"""Every command in README.md runs as written (issue 16).

The commands are read from README.md itself: its ``bash`` blocks and the inline code that starts
with ``lensmass``. Synopses (``lensmass batch MANIFEST --out RESULTS.ecsv [--workers N] [--resume]``)
run with their placeholders filled by small files made here and every optional part included.
Window commands run one after another in a child process with the offscreen Qt platform; a timer
reports what each window shows and closes it. The install-and-test line is the suite itself and is not re-run; the
extras it names are checked in pyproject.toml instead.
"""

from __future__ import annotations

import csv
import json
import os
import re
import shlex
import subprocess
import sys
import tomllib
from pathlib import Path

import numpy as np
import pytest

from lensmass.cli import main

REPO = Path(__file__).resolve().parents[1]
README = REPO / "README.md"

#: Placeholders of the synopses and what stands in for them (files made by ``workdir``).
PLACEHOLDERS = {
    "FILE": "resources/demo_ring_a.lensmass.json", "OUT.png": "shot.png", "MANIFEST": "manifest.csv",
    "RESULTS.ecsv": "results.ecsv", "N": "1", "SUBMISSIONS": "class.csv", "REPORT.csv": "report.csv",
    "OUTDIR": "demo_out", "NAME": "tris_ring_a",
}
#: Inline code naming a subcommand (a heading or a mention), not a command line.
_NAME_ONLY = re.compile(r"^lensmass [a-z]+$")


def readme_commands() -> list[str]:
    """Command lines of README.md, in order, each once."""
    text = README.read_text()
    found: list[str] = []
    for block in re.findall(r"```bash\n(.*?)```", text, re.S):
        for line in re.sub(r"\\\n\s*", " ", block).splitlines():
            line = re.sub(r"\s+#.*$", "", line).strip()
            found.extend(part.strip() for part in line.split("&&") if part.strip())
    for span in re.findall(r"`(lensmass(?:\s[^`]*)?)`", text):
        span = " ".join(span.split())
        if not _NAME_ONLY.match(span):
            found.append(span)
    return list(dict.fromkeys(found))


def expand(command: str) -> list[str]:
    """argv of a README command: optional parts included, placeholders filled."""
    argv = shlex.split(command.replace("[", " ").replace("]", " "))
    return [PLACEHOLDERS.get(a, a) for a in argv]


@pytest.fixture(scope="module")
def workdir(tmp_path_factory):
    """A folder holding the demo data as the README expects, plus the small files its commands name."""
    from PIL import Image
    from astropy.io import fits

    d = tmp_path_factory.mktemp("readme")
    for name in ("demo_fields", "resources"):
        (d / name).symlink_to(REPO / name)
    # nz.csv, columns z, weight: a Smail et al. (1994) n(z) ~ z^2 exp(-(z/0.7)^1.5) on a grid
    z = np.linspace(0.4, 3.0, 27)
    with open(d / "nz.csv", "w", newline="") as fh:
        rows = ((f"{v:.2f}", f"{v**2 * np.exp(-(v / 0.7) ** 1.5):.5f}") for v in z)
        csv.writer(fh).writerows([("z", "weight"), *rows])
    # cutout.png + arcs.csv: the demo ring as an 8-bit picture (rows as stored) and its arc points
    ring = fits.getdata(REPO / "demo_fields" / "tris_ring_a.fits").astype(float)
    lo, hi = np.percentile(ring, [1, 99.5])
    Image.fromarray((np.clip((ring - lo) / (hi - lo), 0, 1) * 255).astype(np.uint8)).save(d / "cutout.png")
    truth = json.loads((REPO / "demo_fields" / "tris_ring_a.truth.json").read_text())
    _points(d / "arcs.csv", truth["arc_points_xy"])
    double = json.loads((REPO / "demo_fields" / "tris_double_b.truth.json").read_text())
    _points(d / "images.csv", double["image_points_xy"])
    (d / "manifest.csv").write_text("id,theta_e_arcsec,theta_e_err,z_l,z_s\nlens1,1.4,0.05,0.25,0.9\n"
                                    "lens2,2.1,0.1,0.4,1.6\n")
    (d / "class.csv").write_text("student,theta_e_arcsec,z_l,z_s,r_e_kpc\nada,1.4,0.25,0.9,5.5\n")
    return d


def _points(path: Path, xy) -> None:
    with open(path, "w", newline="") as fh:
        csv.writer(fh).writerows([("x", "y"), *((f"{x:.2f}", f"{y:.2f}") for x, y in xy)])


def test_readme_lists_the_commands_this_test_knows():
    commands = readme_commands()
    subcommands = {c.split()[1] for c in commands if c.startswith("lensmass ")}
    assert {"gui", "estimate", "measure", "shear", "batch", "grade", "demo"} <= subcommands
    for command in commands:
        leftover = [a for a in expand(command) if re.fullmatch(r"[A-Z][A-Z0-9_.]*", a) and not a.startswith("-")]
        assert not leftover, f"README command '{command}' has placeholders this test cannot fill: {leftover}"


_WINDOW_PROBE = """
import json, sys
from PySide6.QtCore import QTimer
from lensmass.cli import main
from lensmass.gui.app import application
from lensmass.gui.mainwindow import MainWindow

app = application()
quitter = QTimer()
quitter.timeout.connect(app.quit)  # quit() before exec() (inside an early processEvents) is ignored: repeat it
for argv in json.loads(sys.argv[1]):
    poll, tries = QTimer(), [0]

    def probe(argv=argv, poll=poll, tries=tries):
        shown = [w for w in app.topLevelWidgets() if isinstance(w, MainWindow) and w.isVisible()]
        tries[0] += 1
        if shown and (shown[0].windowTitle() != "lensmass" or len(argv) < 2 or tries[0] > 100):
            print("WINDOW", json.dumps(argv), shown[0].windowTitle(), "| image:", shown[0].model.image is not None,
                  flush=True)
            for w in shown:
                w.model.dirty = False
                w.close()
            poll.stop()
            quitter.start(100)

    if "--screenshot" not in argv:
        poll.timeout.connect(probe)
        poll.start(200)
    code = main(argv)
    poll.stop()
    quitter.stop()
    print("EXIT", json.dumps(argv), code, flush=True)
"""


def test_readme_window_commands_run_as_written(workdir):
    """The window commands, in one offscreen child process (one start-up of Qt for all of them)."""
    runs = [expand(c)[1:] for c in readme_commands() if c.startswith("lensmass") and _is_window(expand(c))]
    assert runs, "README.md shows no window command"
    env = dict(os.environ, QT_QPA_PLATFORM="offscreen", HOME=str(workdir), XDG_CONFIG_HOME=str(workdir / "config"),
               LENSMASS_DATA_DIR=str(workdir / "data"), PYTHONPATH=str(REPO))
    done = subprocess.run([sys.executable, "-c", _WINDOW_PROBE, json.dumps(runs)], cwd=workdir, env=env,
                          capture_output=True, text=True, timeout=600)
    assert done.returncode == 0 and "Traceback" not in done.stderr, done.stderr[-2000:]
    for argv in runs:
        assert f"EXIT {json.dumps(argv)} 0" in done.stdout, (argv, done.stdout[-2000:])
        if "--screenshot" in argv:
            shot = workdir / argv[argv.index("--screenshot") + 1]
            assert shot.stat().st_size > 10_000 and shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
            continue
        line = next(x for x in done.stdout.splitlines() if x.startswith(f"WINDOW {json.dumps(argv)}"))
        if len(argv) > 1:  # opened on a file: the title names it and an image is shown
            assert Path(argv[1]).name in line and "image: True" in line, line


def _is_window(argv: list[str]) -> bool:
    return argv == ["lensmass"] or argv[1] == "gui"


@pytest.mark.parametrize("command", [c for c in readme_commands() if c.startswith("lensmass")
                                     and not _is_window(expand(c))])
def test_readme_command_runs_as_written(command, workdir, monkeypatch, capsys):
    argv = expand(command)
    monkeypatch.chdir(workdir)
    status = main(argv[1:])
    out, err = capsys.readouterr()
    assert status == 0, err
    assert "Traceback" not in err
    if "--json" in argv:
        result = json.loads(out)
        assert "notes" in result and "models" in result
    if argv[1] == "shear":  # the example maps the demo catalogue's own columns and writes both files
        assert (workdir / "profile.ecsv").stat().st_size > 0 and (workdir / "kappa.fits").stat().st_size > 0
        assert "NFW M200" in out and "posterior median" in out


def test_install_line_names_extras_that_exist():
    # "python -m pip install ".[test,postgres]" && python -m pytest" is this suite itself; its extras must exist
    lines = [c for c in readme_commands() if c.startswith("python -m pip install")]
    extras = tomllib.loads((REPO / "pyproject.toml").read_text())["project"]["optional-dependencies"]
    for line in lines:
        m = re.search(r"\.\[([a-z,]+)\]", line)
        if m:
            assert set(m.group(1).split(",")) <= set(extras)
    assert "python -m pytest" in readme_commands()
