"""The split of the shear analysis into modules of one purpose keeps every old import path."""

import importlib

import pytest

MOVED = {
    "ArrayBlocks": "lensmass.core.catalog_arrays",
    "mass_map_for_result": "lensmass.core.shear_products",
    "model_curves": "lensmass.core.shear_products",
    "model_descriptions": "lensmass.core.shear_notes",
    "profile_rows": "lensmass.core.shear_notes",
    "detection_note": "lensmass.core.shear_notes",
    "_zeta_subbins": "lensmass.core.shear_zeta",
    "_zeta_from_subbins": "lensmass.core.shear_zeta",
    "_zeta_from_annulus": "lensmass.core.shear_zeta",
}


@pytest.mark.parametrize("name, home", sorted(MOVED.items()))
def test_old_import_path_is_the_same_object(name, home):
    old = importlib.import_module("lensmass.core.shear_analysis")
    assert getattr(old, name) is getattr(importlib.import_module(home), name)


def test_no_shear_module_is_over_500_lines():
    from pathlib import Path

    import lensmass.core as core

    folder = Path(core.__file__).parent
    for name in ("shear_analysis", "shear_sums", "shear_zeta", "shear_notes", "shear_products", "catalog_arrays"):
        lines = (folder / f"{name}.py").read_text().count("\n")
        assert lines <= 500, f"{name}.py has {lines} lines"
