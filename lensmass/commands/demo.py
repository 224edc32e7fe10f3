"""``lensmass demo OUTDIR``: write the synthetic demo fields (ray-traced FITS + truth files)."""

from __future__ import annotations

import argparse
import sys


def add_arguments(parser: argparse.ArgumentParser) -> None:
    from lensmass.io.demo_fields import FIELD_NAMES

    parser.add_argument("outdir", metavar="OUTDIR", help="folder to write the fields into (created if needed)")
    from lensmass.io.demo_collision import NAME as COLLISION

    names = (*FIELD_NAMES, COLLISION)
    parser.add_argument("--field", action="append", choices=names, metavar="NAME",
                        help=f"write only this field (repeatable): {', '.join(names)}")


def run(args: argparse.Namespace) -> int:
    from pathlib import Path

    from lensmass.core.errors import LensInputError
    from lensmass.io.demo_fields import FIELD_NAMES, write_demo_fields

    from lensmass.io.demo_collision import NAME as COLLISION
    from lensmass.io.demo_collision import write_collision_field

    out = Path(args.outdir)
    if out.exists() and not out.is_dir():
        raise LensInputError(f"{out} is a file, not a folder: give a folder for the demo fields.")
    ray_traced = [n for n in (args.field or FIELD_NAMES) if n in FIELD_NAMES]
    try:
        paths = write_demo_fields(out, ray_traced)
        if not args.field or COLLISION in args.field:  # the colliding-cluster field's files
            paths += write_collision_field(out)
    except PermissionError:
        raise LensInputError(f"Cannot write into {out}: permission denied; choose a folder you can write to.") from None
    for p in paths:
        print(p)
    if args.field:
        return 0
    try:
        from lensmass.io.demo_shear import write_demo_shear  # the cluster's shear catalogue
    except ImportError:
        return 0
    for p in write_demo_shear(out) or ():
        print(p)
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(0)
