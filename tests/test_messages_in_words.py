"""Core and io messages name quantities in words, never a command-line flag.

The rule (DEVELOPERS.md, "Messages"): a message from ``lensmass/core`` or ``lensmass/io`` names the
quantity in words and its Python parameter in backquotes (``the lens redshift (`z_l`)``); only the
command line turns the parameter into its flag (``lensmass.cli.PARAMETER_FLAGS``) and the window into
its field's name (``lensmass.gui.words.FIELD_NAMES``). Docstrings and comments may speak of flags.
"""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest

from lensmass.core.errors import LensInputError, in_words

ROOT = Path(__file__).resolve().parents[1] / "lensmass"
FLAG = re.compile(r"(?<![\w-])--[a-z][a-z0-9-]*")
PARAM = re.compile(r"`([A-Za-z_][A-Za-z0-9_]*)`")


def _docstring_nodes(tree: ast.AST) -> set[int]:
    ids = set()
    for node in ast.walk(tree):
        if isinstance(node, (ast.Module, ast.ClassDef, ast.FunctionDef, ast.AsyncFunctionDef)):
            body = getattr(node, "body", [])
            if body and isinstance(body[0], ast.Expr) and isinstance(body[0].value, ast.Constant):
                ids.add(id(body[0].value))
    return ids


def _strings(folder: str):
    """(file, line, text) of every string literal in ``lensmass/<folder>`` that is not a docstring."""
    for path in sorted((ROOT / folder).rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        skip = _docstring_nodes(tree)
        for node in ast.walk(tree):
            if isinstance(node, ast.Constant) and isinstance(node.value, str) and id(node) not in skip:
                yield path.relative_to(ROOT.parent), node.lineno, node.value


@pytest.mark.parametrize("folder", ["core", "io"])
def test_no_command_line_flag_in_messages(folder):
    found = [f"{p}:{line}: {FLAG.search(text).group(0)}" for p, line, text in _strings(folder) if FLAG.search(text)]
    assert not found, "messages that name a flag instead of the quantity:\n" + "\n".join(found)


def test_every_parameter_named_in_a_message_has_a_flag():
    """Each backquoted parameter of a core/io message is shown as a flag by the command line."""
    from lensmass.cli import PARAMETER_FLAGS

    names = {m for folder in ("core", "io") for _, _, text in _strings(folder) for m in PARAM.findall(text)}
    # parameters of the Python API alone (no flag): the per-galaxy redshift column of an in-memory catalogue
    python_only = {"z"}
    missing = sorted(names - set(PARAMETER_FLAGS) - python_only)
    assert not missing, f"parameters named in messages with no flag in cli.PARAMETER_FLAGS: {missing}"


def test_command_line_shows_flags_and_python_shows_words():
    """The same core refusal: Python keeps the words and the parameter, the command line shows the flag."""
    from lensmass import estimate
    from lensmass.cli import PARAMETER_FLAGS, main

    with pytest.raises(LensInputError) as info:
        estimate(1.2, 0.5, 2.0, samples=10**12, theta_e_err=0.1)
    text = str(info.value)
    assert "Monte Carlo draws (`samples`)" in text and "--" not in text
    assert "(--samples)" in in_words(text, PARAMETER_FLAGS)
    assert main(["estimate", "--theta-e", "1.2", "--zl", "0.5", "--zs", "2.0", "--theta-e-err", "0.1",
                 "--samples", "1000000000000"]) == 2


def test_window_shows_field_names():
    from lensmass.gui.words import window_words

    assert window_words("Check the Sersic index (`sersic_n`).") == "Check the Sersic index (Sersic index)."
