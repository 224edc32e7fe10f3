"""``lensmass grade``: grade a class's lensing answers and name the classic mistakes."""

from __future__ import annotations

import argparse
import math
from pathlib import Path

from lensmass.commands.common import add_cosmology_options, cosmology_from_args
from lensmass.core.errors import LensInputError


def add_arguments(parser: argparse.ArgumentParser) -> None:
    from lensmass.core.grading import GRADABLE, MISTAKES

    parser.formatter_class = argparse.RawDescriptionHelpFormatter
    parser.description = (
        "Grade a table of student answers (CSV/ECSV) with columns student, theta_e_arcsec, z_l, z_s and any of\n  "
        + ", ".join(GRADABLE)
        + ".\nEach answer is compared with the value lensmass computes; a wrong answer that matches a known\n"
        "mistake is diagnosed. Known mistakes:\n" + "\n".join(f"  - {m.description}" for m in MISTAKES)
    )
    parser.add_argument("submissions", metavar="SUBMISSIONS", help="table of student answers (CSV or ECSV)")
    parser.add_argument("--out", required=True, metavar="REPORT.csv", help="report: one row per student and quantity")
    parser.add_argument("--tolerance", type=float, default=0.05,
                        help="largest relative error that passes (default 0.05)")
    parser.add_argument("--html", metavar="SUMMARY.html", default=None,
                        help="class summary page (default: REPORT.html beside the report)")
    add_cosmology_options(parser)


def run(args: argparse.Namespace) -> int:
    from lensmass.core.cosmology import cosmology_label
    from lensmass.io.grading_report import grade_class, summary_sentence, write_report_csv, write_summary_html

    out = Path(args.out)
    if out.suffix.lower() != ".csv":
        raise LensInputError(f"--out must name a .csv file (got '{out.name}').")
    html_path = Path(args.html) if args.html else out.with_suffix(".html")
    from lensmass.io.atomic import check_writable

    check_writable(out, "--out")
    check_writable(html_path, "--html" if args.html else "the summary beside --out")
    if out.absolute() == html_path.absolute():
        raise LensInputError("--out and --html name the same file: give them different names.")
    if not (math.isfinite(args.tolerance) and 0 < args.tolerance < 1):
        raise LensInputError(f"--tolerance is a relative error between 0 and 1 (0.05 = 5%), got {args.tolerance}.")
    cosmo = cosmology_from_args(args)
    report = grade_class(args.submissions, cosmo, args.tolerance)
    write_report_csv(out, report)
    write_summary_html(html_path, report, title=f"Grading of {Path(args.submissions).name}",
                       cosmology=cosmology_label(cosmo), tolerance=args.tolerance)
    print(summary_sentence(report) + f".\nreport: {out}\nsummary: {html_path}")
    return 0
