"""The flat public API: every job importable from ``lensmass``, each callable with a runnable example.

The examples themselves run with the other docstring examples (``tests/test_rules.py``); here each
public callable must have one (an ``Examples`` section with ``>>>`` lines), as numpy's docstring
standard and scikit-image do (common practice).
"""

from __future__ import annotations

import inspect

import pytest

import lensmass

CALLABLES = sorted(n for n in lensmass.__all__ if not n.startswith("_") and callable(getattr(lensmass, n)))


def test_the_api_covers_every_job():
    # issue 12: estimate, point fits and lens models, the ring finder, lens light, shear, cluster
    # components, stacking, batch and grading
    jobs = {"estimate", "fit_circle", "fit_lens_model", "find_ring", "fit_lens_light", "analyse_shear_catalog",
            "locate_cluster_components", "analyse_stack_catalog", "analyse_stack", "run_batch", "grade_answers"}
    assert jobs <= set(lensmass.__all__) and jobs <= set(dir(lensmass))


@pytest.mark.parametrize("name", CALLABLES)
def test_every_public_callable_has_a_runnable_example(name):
    doc = inspect.getdoc(getattr(lensmass, name)) or ""
    assert "Examples\n--------" in doc and ">>> " in doc.split("Examples\n--------", 1)[1], \
        f"lensmass.{name} has no Examples section with a runnable example"
