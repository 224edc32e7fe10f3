"""The desktop window. This package is the only place Qt (PySide6) is imported.

Entry point: :func:`lensmass.gui.app.run_window`. The state of the window is the
plain model in :mod:`lensmass.gui.model`; every number shown comes from
:mod:`lensmass.core`.
"""
