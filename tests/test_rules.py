"""The project's rules, in code, so ``python -m pytest`` (and CI) enforce them.

- Import contracts between the layers (DEVELOPERS.md "Layout"): core imports no Qt, io,
  commands or command line; io imports no window or command line; the window and the command
  line do not import each other (one sanctioned door: the ``gui`` subcommand opens the window);
  only the window imports Qt.
- ``ruff check`` passes, and mypy on core and io, with the configuration in pyproject.toml.
- Every docstring example runs (doctest, the standard library's runner).
- No source file over about 500 lines without a reason given at its top.
- Packaging facts: one place for the version, ``python -m lensmass``, a LICENSE matching pyproject,
  package-data that points at files that exist.
"""

from __future__ import annotations

import ast
import doctest
import importlib
import os
import shutil
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "lensmass"
QT = ("PySide6", "shiboken6", "matplotlib.backends.backend_qt", "matplotlib.backends.backend_qtagg")

#: Importing modules that may cross a boundary, each with the reason.
SANCTIONED = {
    ("lensmass.commands.gui", "lensmass.gui.app"): "the 'gui' subcommand's job is to open the window",
}


def _modules():
    for path in sorted(PACKAGE.rglob("*.py")):
        yield ".".join(path.relative_to(ROOT).with_suffix("").parts).removesuffix(".__init__"), path


def _imports(path: Path) -> list[tuple[str, int]]:
    """Every absolute import in the file, top level or inside functions (lazy imports count too)."""
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found += [(a.name, node.lineno) for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            found.append((node.module, node.lineno))
    return found


def _layer(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else "top"


FORBIDDEN = {
    "core": ("lensmass.io", "lensmass.gui", "lensmass.commands", "lensmass.cli", *QT),
    "io": ("lensmass.gui", "lensmass.commands", "lensmass.cli", *QT),
    "commands": ("lensmass.gui", *QT),
    "cli": ("lensmass.gui", *QT),
    "gui": ("lensmass.commands", "lensmass.cli"),
    "top": ("lensmass.gui", "lensmass.commands", *QT),
}


def test_import_contracts_between_the_layers():
    broken = []
    for module, path in _modules():
        rules = FORBIDDEN.get(_layer(module), ())
        if module == "lensmass.__main__":
            rules = ("lensmass.gui", *QT)
        for name, line in _imports(path):
            if any(name == bad or name.startswith(bad + ".") for bad in rules):
                if (module, name) not in SANCTIONED:
                    broken.append(f"{path.relative_to(ROOT)}:{line} imports {name}")
    assert not broken, "layer rules broken:\n" + "\n".join(broken)


def test_the_two_stores_do_not_import_each_other():
    """The PostgreSQL store builds on the SQLite one; the SQLite one never reaches back (no cycle)."""
    path = PACKAGE / "io" / "store.py"
    assert not [n for n, _ in _imports(path) if n == "lensmass.io.store_postgres"], "io/store.py imports io/store_postgres.py"


def test_the_lens_light_fit_does_not_take_its_model_from_the_demo_simulator():
    """One Sersic surface brightness (core/sersic.py) serves the fit and the simulator."""
    assert "lensmass.core.raytrace" not in [n for n, _ in _imports(PACKAGE / "core" / "lenslight.py")]
    defined = [p for p in PACKAGE.rglob("*.py") if "def sersic_surface_brightness(" in p.read_text(encoding="utf-8")]
    assert defined == [PACKAGE / "core" / "sersic.py"]


def test_ruff_check_passes():
    ruff = shutil.which("ruff") or str(Path(sys.executable).with_name("ruff"))
    if not Path(ruff).exists() and shutil.which("ruff") is None:
        pytest.fail("ruff is not installed: pip install '.[test]'")
    run = subprocess.run([ruff, "check", "--no-cache", "lensmass", "tests", "benchmarks"], cwd=ROOT,
                         capture_output=True, text=True)
    assert run.returncode == 0, run.stdout[-4000:] + run.stderr[-2000:]


def test_mypy_passes_on_core_and_io():
    """Type hints of core and io checked with the configuration in pyproject.toml ([tool.mypy])."""
    mypy = shutil.which("mypy") or str(Path(sys.executable).with_name("mypy"))
    if not Path(mypy).exists() and shutil.which("mypy") is None:
        pytest.fail("mypy is not installed: pip install '.[test]'")
    run = subprocess.run([mypy, "--no-incremental"], cwd=ROOT, capture_output=True, text=True)
    assert run.returncode == 0, run.stdout[-4000:] + run.stderr[-2000:]


def _doctest_modules():
    for module, path in _modules():
        if _layer(module) == "gui" or module.endswith("__main__"):
            continue  # the window's modules import Qt; their behaviour is tested by driving the window
        if ">>>" in path.read_text(encoding="utf-8"):
            yield module


@pytest.mark.parametrize("module", list(_doctest_modules()))
def test_docstring_examples_run(module):
    mod = importlib.import_module(module)
    finder = doctest.DocTestFinder(exclude_empty=True)
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    tests = finder.find(mod, module, globs={"np": importlib.import_module("numpy"), **vars(mod)})
    for test in tests:
        runner.run(test)
    result = runner.summarize(verbose=False)
    assert result.failed == 0, f"{result.failed} docstring example(s) of {module} fail (see the output above)"


def test_no_source_file_is_long_without_a_reason():
    long = []
    for module, path in _modules():
        text = path.read_text(encoding="utf-8")
        if text.count("\n") > 520 and "Longer than 500 lines because" not in text[:3000]:
            long.append(f"{path.relative_to(ROOT)} ({text.count(chr(10))} lines)")
    assert not long, "split these or say at their top why they are long: " + ", ".join(long)


def test_packaging_facts():
    meta = tomllib.loads((ROOT / "pyproject.toml").read_text())
    project = meta["project"]
    assert "version" in project.get("dynamic", []), "the version must come from lensmass.__version__ only"
    assert meta["tool"]["setuptools"]["dynamic"]["version"] == {"attr": "lensmass.__version__"}
    assert project["license"] == "BSD-3-Clause"
    assert "BSD 3-Clause License" in (ROOT / "LICENSE").read_text()
    for pattern_list in meta["tool"]["setuptools"].get("package-data", {}).values():
        for pattern in pattern_list:
            assert list(PACKAGE.glob(pattern)), f"package-data '{pattern}' matches no file"
    assert (ROOT / "CHANGELOG.md").is_file()
    run = subprocess.run([sys.executable, "-m", "lensmass", "--version"], cwd=ROOT, capture_output=True, text=True,
                         env={**os.environ, "PYTHONPATH": str(ROOT)})
    import lensmass

    assert run.returncode == 0 and run.stdout.strip() == f"lensmass {lensmass.__version__}", run.stderr
