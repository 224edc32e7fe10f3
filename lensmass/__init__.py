"""lensmass: from what a lensing image shows to a defensible, model-labelled mass.

The flat public API lives here; each name loads its module on first use, so the command line
starts quickly. Every result says which model and assumptions produced each number (``notes``
and ``models``); masses are model-dependent estimates.

>>> import lensmass
>>> r = lensmass.estimate(1.2, 0.2, 0.6, cosmology="Planck18")
>>> str(r.to_table()["mass_einstein_msun"].unit)
'solMass'
>>> "estimate" in dir(lensmass)
True

=========================  ======================================================================
job                        names
=========================  ======================================================================
mass from theta_E          ``estimate`` (Quantities, arrays, ``strict=``), ``estimate_many``, ``LensResult``
point fits                 ``fit_circle``, ``fit_ellipse``, ``multiple_image_radius``, ``measure_from_points``
lens models                ``fit_lens_model`` (pixels on an image), ``fit_lens_model_arcsec`` (sky offsets)
images and the ring        ``load_image``, ``find_ring``, ``find_center``, ``measure_auto_ring``
lens light                 ``fit_lens_light``, ``add_light``, ``light_inside_einstein``
weak lensing               ``read_shear_catalog``, ``analyse_shear_catalog``, ``shear_profile``, ``mass_map``
cluster components         ``locate_cluster_components``
stacking                   ``analyse_stack_catalog`` (arrays), ``analyse_stack`` (blocks of a large catalogue)
batch and grading          ``run_batch``, ``batch_settings``, ``grade_answers``
cosmology                  ``resolve_cosmology``
facts about result keys    ``RESULT_KEYS``, ``KeyFact``, ``register_key``
=========================  ======================================================================
"""

from __future__ import annotations

__version__ = "0.1.0"

#: Public name -> module that defines it (imported on first use).
_API = {
    "estimate": "lensmass.core.estimate",
    "estimate_many": "lensmass.core.estimate_many",
    "LensResult": "lensmass.core.results",
    "LensInputError": "lensmass.core.errors",
    "fit_circle": "lensmass.core.arcfit",
    "fit_ellipse": "lensmass.core.arcfit",
    "multiple_image_radius": "lensmass.core.arcfit",
    "measure_from_points": "lensmass.core.einstein",
    "measure_auto_ring": "lensmass.core.einstein",
    "fit_lens_model": "lensmass.core.lens_model",
    "fit_lens_model_arcsec": "lensmass.core.lens_model",
    "fit_lens_light": "lensmass.core.lenslight",
    "locate_cluster_components": "lensmass.core.cluster_components",
    "analyse_stack_catalog": "lensmass.core.stack_arrays",
    "analyse_stack": "lensmass.core.stack_analysis",
    "resolve_cosmology": "lensmass.core.cosmology",
    "find_ring": "lensmass.core.ringfinder",
    "find_center": "lensmass.core.ringfinder",
    "load_image": "lensmass.io.images",
    "add_light": "lensmass.core.light",
    "light_inside_einstein": "lensmass.core.einstein_photometry",
    "read_shear_catalog": "lensmass.io.catalogs",
    "analyse_shear_catalog": "lensmass.core.shear_analysis",
    "shear_profile": "lensmass.core.shear_profile",
    "mass_map": "lensmass.core.mass_map",
    "grade_answers": "lensmass.core.grading",
    "run_batch": "lensmass.io.batch_engine",
    "batch_settings": "lensmass.io.batch_engine",
    "RESULT_KEYS": "lensmass.core.result_keys",
    "KeyFact": "lensmass.core.result_keys",
    "register_key": "lensmass.core.result_keys",
}

__all__ = sorted([*_API, "__version__"])


def __getattr__(name: str):
    module = _API.get(name)
    if module is None:
        raise AttributeError(f"module 'lensmass' has no attribute {name!r}")
    import importlib

    return getattr(importlib.import_module(module), name)


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
