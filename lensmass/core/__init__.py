"""Pure lensing physics on numpy, scipy and astropy: no Qt, no file I/O.

Units are explicit in every name (``_arcsec``, ``_mpc``, ``_msun``...) or carried
as astropy quantities.
"""
