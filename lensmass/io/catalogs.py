"""Read weak-lensing shape catalogues: FITS binary tables, CSV, ECSV and Parquet.

A catalogue is mapped onto six roles: ``ra``, ``dec`` (degrees), ``e1``, ``e2``
(ellipticity components in the east/north frame, e1 > 0 elongated east-west),
``weight`` (optional, default 1) and ``z`` (optional per-galaxy source redshift).
Column names are matched to roles by an explicit map (``ra=RA,dec=DEC,...``) or,
for roles left out, by a few usual spellings, case-insensitively.

Examples
--------
>>> parse_column_map("ra=RA, e1=G1")
{'ra': 'RA', 'e1': 'G1'}
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from lensmass.core.errors import LensInputError

ROLES = ("ra", "dec", "e1", "e2", "weight", "z")
REQUIRED_ROLES = ("ra", "dec", "e1", "e2")

#: Spellings tried, in order, for a role the user did not map (compared lower-case).
USUAL_NAMES = {
    "ra": ("ra", "alpha", "ra_deg", "raj2000", "alpha_j2000"),
    "dec": ("dec", "delta", "dec_deg", "dej2000", "decj2000", "delta_j2000"),
    "e1": ("e1", "g1", "eps1", "e_1"),
    "e2": ("e2", "g2", "eps2", "e_2"),
    "weight": ("weight", "w", "wt", "weights"),
    "z": ("z", "zphot", "z_phot", "photoz", "z_b", "zs", "z_s", "redshift"),
}

_SUFFIX_FORMATS = {
    ".fits": "fits", ".fit": "fits", ".fts": "fits", ".gz": "fits",
    ".csv": "ascii.csv", ".ecsv": "ascii.ecsv",
    ".parquet": "parquet", ".pq": "parquet",
}


@dataclass
class ShearCatalog:
    """Columns of a shape catalogue as float arrays (one row per galaxy).

    ``z`` is None when the catalogue has no redshift column (a single source
    redshift is then given separately); ``columns`` records which file column
    fed each role, and ``flips`` which ellipticity signs were flipped.
    """

    ra_deg: np.ndarray
    dec_deg: np.ndarray
    e1: np.ndarray
    e2: np.ndarray
    weight: np.ndarray
    z: np.ndarray | None
    path: str = ""
    columns: dict[str, str] = field(default_factory=dict)
    flips: tuple[str, ...] = ()

    @property
    def n_rows(self) -> int:
        return int(self.ra_deg.size)


def parse_column_map(text: str | None) -> dict[str, str]:
    """``"ra=RA,dec=DEC,e1=E1"`` to ``{"ra": "RA", ...}``, with clear messages."""
    if not text:
        return {}
    mapping: dict[str, str] = {}
    for item in str(text).split(","):
        item = item.strip()
        if not item:
            continue
        role, sep, name = (s.strip() for s in item.partition("="))
        role = role.lower()
        if not sep or not name:
            raise LensInputError(f"Column mapping '{item}' must read ROLE=COLUMN (for example e1=E1).")
        if role not in ROLES:
            raise LensInputError(f"Unknown column role '{role}' in the column mapping (`columns`): use {', '.join(ROLES)}.")
        mapping[role] = name
    return mapping


def catalog_format(path: str | Path) -> str:
    """The astropy table format for a catalogue file, from its suffix."""
    p = Path(path)
    suffix = p.suffix.lower()
    if suffix not in _SUFFIX_FORMATS:
        raise LensInputError(
            f"Cannot tell the format of '{p.name}': name it .fits, .csv, .ecsv or .parquet."
        )
    if suffix == ".gz" and not p.name.lower().endswith((".fits.gz", ".fit.gz")):
        raise LensInputError(f"Only gzipped FITS catalogues (.fits.gz) are read, not '{p.name}'.")
    return _SUFFIX_FORMATS[suffix]


def _read_table(path: Path, fmt: str, columns: list[str] | None = None):
    if path.is_dir():
        raise LensInputError(f"'{path}' is a folder, not a catalogue: give the catalogue file itself.")
    if not path.is_file():
        raise LensInputError(f"Catalogue '{path}' does not exist: check the path.")
    if fmt == "parquet":
        try:
            import pyarrow  # noqa: F401
        except ImportError:
            raise LensInputError("Reading Parquet needs pyarrow: pip install pyarrow, or convert to FITS/CSV.") from None
    try:
        with warnings.catch_warnings():  # a damaged file is reported in one sentence below, not as warnings
            warnings.simplefilter("ignore")
            return _read_with_astropy(path, fmt, columns)
    except Exception as exc:  # astropy and its readers raise many kinds here
        raise LensInputError(
            f"Cannot read catalogue '{path.name}' as {fmt.upper()} ({type(exc).__name__}): "
            "check that the file is complete and in that format."
        ) from None


def _read_with_astropy(path: Path, fmt: str, columns: list[str] | None):
    from astropy.table import Table

    if fmt == "fits":
        return Table.read(path, format="fits", memmap=True, character_as_bytes=False)
    if fmt == "parquet":  # pyarrow directly: astropy's reader would need pandas
        import pyarrow.parquet as pq

        arrow = pq.read_table(path, columns=columns)
        return Table({name: arrow.column(name).to_numpy(zero_copy_only=False) for name in arrow.column_names})
    return Table.read(path, format=fmt)


def resolve_columns(colnames: list[str], mapping: dict[str, str], *, need_z: bool = False) -> dict[str, str]:
    """Match roles to file columns: the explicit map first, then the usual spellings.

    Raises a :class:`LensInputError` naming a missing column and listing those present.
    """
    lower = {n.lower(): n for n in colnames}
    present = ", ".join(colnames) if len(colnames) <= 30 else ", ".join(colnames[:30]) + ", ..."
    guesses = guess_columns(colnames)
    resolved: dict[str, str] = {}
    for role in ROLES:
        if role in mapping:
            name = mapping[role]
            actual = name if name in colnames else lower.get(name.lower())
            if actual is None:
                raise LensInputError(
                    f"The catalogue has no column '{name}' (mapped to {role}); its columns are: {present}."
                )
            resolved[role] = actual
        elif role in guesses:
            resolved[role] = guesses[role]
    by_column: dict[str, str] = {}
    for role, name in resolved.items():
        if name in by_column:
            raise LensInputError(f"Column '{name}' is used for both {by_column[name]} and {role}: map each role to "
                                 "its own column (`columns`).")
        by_column[name] = role
    for role in REQUIRED_ROLES + (("z",) if need_z else ()):
        if role not in resolved:
            alternative = ", or give one source redshift for all with `z_s`" if role == "z" else ""
            raise LensInputError(
                f"The catalogue has no column for {role}: map one (`columns`, role {role}){alternative} "
                f"(its columns are: {present})."
            )
    return resolved


def _float_column(table, name: str, role: str) -> np.ndarray:
    col = table[name]
    if getattr(col, "ndim", 1) != 1:
        raise LensInputError(f"Column '{name}' ({role}) holds arrays per row; map a column of single numbers.")
    try:
        if getattr(col, "mask", None) is not None and np.any(col.mask):
            data: np.ndarray = np.ma.filled(np.ma.asarray(col, dtype=float), np.nan)
        else:
            data = np.asarray(col, dtype=float)
    except (TypeError, ValueError):
        raise LensInputError(f"Column '{name}' ({role}) is not numeric: map a numeric column (`columns`).") from None
    return np.ascontiguousarray(data, dtype=float)


def read_shear_catalog(
    path: str | Path,
    columns: dict[str, str] | str | None = None,
    *,
    need_z: bool = False,
    flip_e1: bool = False,
    flip_e2: bool = False,
) -> ShearCatalog:
    """Read a shape catalogue into float arrays.

    Parameters
    ----------
    path : str or Path
        ``.fits`` (binary table in the first table HDU), ``.csv``, ``.ecsv`` or ``.parquet``.
    columns : dict or str, optional
        Role -> column name, or the ``ra=RA,dec=DEC,...`` text form.
    need_z : bool
        Require a redshift column (when no single source redshift is given).
    flip_e1, flip_e2 : bool
        Flip the sign of e1 or e2, for catalogues in another sign convention.

    Returns
    -------
    ShearCatalog
        Rows are not filtered here (NaNs stay): :func:`lensmass.core.shear_profile.select_sources`
        drops and counts bad rows.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "shapes.fits"
    >>> write_shear_catalog_fits(path, {"ra": np.array([150.0, 150.1]), "dec": np.array([2.0, 2.1]),
    ...                                 "e1": np.array([0.1, -0.2]), "e2": np.array([0.0, 0.05])})
    >>> cat = read_shear_catalog(path)
    >>> cat.e1.tolist(), cat.z is None
    ([0.1, -0.2], True)
    """
    path = Path(path)
    mapping = parse_column_map(columns) if isinstance(columns, str) or columns is None else dict(columns)
    fmt = catalog_format(path)
    try:
        table = _read_table(path, fmt)
        if len(table) == 0:
            raise LensInputError(f"Catalogue '{path.name}' has no rows: it needs one row per galaxy.")
        resolved = resolve_columns(list(table.colnames), mapping, need_z=need_z)
        _check_memory(path, len(table), len(resolved))
        data = {role: _float_column(table, name, role) for role, name in resolved.items()}
    except MemoryError:
        raise LensInputError(_memory_sentence(path, None)) from None
    e1 = -data["e1"] if flip_e1 else data["e1"]
    e2 = -data["e2"] if flip_e2 else data["e2"]
    weight = data.get("weight")
    if weight is None:
        weight = np.ones_like(e1)
    flips = tuple(n for n, f in (("e1", flip_e1), ("e2", flip_e2)) if f)
    return ShearCatalog(data["ra"], data["dec"], e1, e2, weight, data.get("z"), str(path), resolved, flips)


def _memory_sentence(path: Path, n_rows: int | None, need_gb: float | None = None, free_gb: float | None = None) -> str:
    size = f"the {n_rows:,} rows of '{path.name}'" if n_rows else f"'{path.name}'"
    amounts = f" needs about {need_gb:.1f} GB but {free_gb:.1f} GB is free" if need_gb else " does not fit in memory"
    return (f"Reading {size} into memory{amounts}: ask for no mass map (`map_out`) so the catalogue is streamed "
            "in blocks, or map a smaller part of the survey.")


def _check_memory(path: Path, n_rows: int, n_columns: int) -> None:
    """A clear sentence before the float columns of a huge table would exhaust the free memory."""
    import os

    need = n_rows * (n_columns + 3) * 8.0  # float columns plus the analysis' per-row arrays
    try:
        free = os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    except (ValueError, OSError, AttributeError):
        return
    if need > free:
        raise LensInputError(_memory_sentence(path, n_rows, need / 1e9, free / 1e9))


def preview_catalog(path: str | Path, n_rows: int = 5) -> tuple[list[str], list[list[str]]]:
    """Column names and the first rows as text, for a column-mapping dialog."""
    path = Path(path)
    table = _read_table(path, catalog_format(path))
    head = table[: max(0, int(n_rows))]
    rows = [[str(head[name][i]) for name in table.colnames] for i in range(len(head))]
    return list(table.colnames), rows


def guess_columns(colnames: list[str]) -> dict[str, str]:
    """The role -> column guesses :func:`resolve_columns` would make (missing roles left out)."""
    lower = {n.lower(): n for n in colnames}
    out = {}
    for role in ROLES:
        for guess in USUAL_NAMES[role]:
            if guess in lower:
                out[role] = lower[guess]
                break
    return out


# ---------------------------------------------------------------- writing results
def write_profile_ecsv(path: str | Path, result: dict) -> None:
    """Write the binned profile of a shear result as ECSV (atomic), with its models in the header."""
    from astropy.table import Table

    from lensmass.io.atomic import atomic_path
    from lensmass.io.jsonout import to_jsonable

    rows = result.get("profile") or []
    if not rows:
        raise LensInputError("There is no profile to write: run the shear analysis first.")
    table = Table(rows=[[r[k] for k in rows[0]] for r in rows], names=list(rows[0]))
    units = {"_arcsec": "arcsec", "_kpc": "kpc", "_msun_per_pc2": "solMass / pc2"}
    for name in table.colnames:
        for ending, unit in units.items():
            if name.endswith(ending):
                table[name].unit = unit
    keep = ("cosmology", "z_l", "center_ra", "center_dec", "source_redshifts", "z_s_effective", "n_used",
            "n_dropped", "best_fit", "medians", "intervals68", "intervals95", "detection_significance", "detected",
            "nfw_m200_upper95_msun", "sis_sigma_v_upper95_kms", "priors", "models")
    table.meta.update(to_jsonable({k: result[k] for k in keep if k in result}))
    table.meta["values"] = ("best_fit: maximum-likelihood parameters (the model columns g_t_model_sis and "
                            "g_t_model_nfw); medians: posterior medians (the values the terminal and the window "
                            "show); intervals: posterior percentiles under the stated priors")
    with atomic_path(path) as tmp:
        table.write(tmp, format="ascii.ecsv", overwrite=True)


def write_mass_map_fits(path: str | Path, mass_map, center_ra: float, center_dec: float, meta: dict | None = None) -> None:
    """Write E-mode, B-mode and noise convergence maps as FITS images with a TAN WCS (atomic).

    The arrays are stored with east to the left (CDELT1 < 0), the usual sky layout:
    the primary HDU is kappa E, then extensions KAPPA_B and, if made, KAPPA_NOISE.
    """
    from astropy.io import fits

    from lensmass.io.atomic import atomic_path

    n = mass_map.kappa_e.shape[1]
    header = fits.Header()
    deg = mass_map.pixel_arcsec / 3600.0
    header.update({
        "CTYPE1": "RA---TAN", "CTYPE2": "DEC--TAN", "CUNIT1": "deg", "CUNIT2": "deg",
        "CRVAL1": float(center_ra), "CRVAL2": float(center_dec),
        "CRPIX1": n / 2 + 0.5, "CRPIX2": mass_map.kappa_e.shape[0] / 2 + 0.5,
        "CDELT1": -deg, "CDELT2": deg, "RADESYS": "ICRS",
        "BUNIT": "", "SMOOTHAS": (mass_map.smoothing_arcsec, "Gaussian smoothing sigma [arcsec]"),
        "NGAL": (mass_map.n_galaxies, "galaxies on the map"),
        "NNOISE": (mass_map.n_noise, "rotated realisations in the noise map"),
        "METHOD": "Kaiser & Squires (1993) inversion, zero-mean (mass-sheet degeneracy)",
    })
    for key, value in (meta or {}).items():
        header[key[:8].upper()] = value
    hdus = [fits.PrimaryHDU(mass_map.kappa_e[:, ::-1].astype(np.float32), header=header)]
    hdus[0].header["EXTNAME"] = "KAPPA_E"
    hdus.append(fits.ImageHDU(mass_map.kappa_b[:, ::-1].astype(np.float32), header=header, name="KAPPA_B"))
    if mass_map.noise is not None:
        hdus.append(fits.ImageHDU(mass_map.noise[:, ::-1].astype(np.float32), header=header, name="KAPPA_NOISE"))
    with atomic_path(path) as tmp:
        fits.HDUList(hdus).writeto(tmp, overwrite=True)


def write_shear_catalog_fits(path: str | Path, columns: dict[str, np.ndarray], meta: dict | None = None) -> None:
    """Write catalogue columns as a FITS binary table (atomic)."""
    from astropy.table import Table

    from lensmass.io.atomic import atomic_path

    table = Table(columns)
    table.meta.update(meta or {})
    with atomic_path(path) as tmp:
        table.write(tmp, format="fits", overwrite=True)
