"""Grading a class: read the submissions table, write the report CSV and an HTML summary.

Submissions (CSV or ECSV): columns ``student``, ``theta_e_arcsec``, ``z_l``, ``z_s``
and any of the gradable quantities of :data:`lensmass.core.grading.GRADABLE`.
The report has one row per student and quantity: ``student``,
``quantity``, ``submitted``, ``expected``, ``relative_error``, ``verdict``
(``pass``/``fail``, or ``missing`` for an answer left blank) and ``diagnosis``. A student row that cannot be graded (a
missing or non-numeric lens input, a source in front of the lens) still gets its
rows, failed, with the reason as diagnosis: no student is dropped.
"""

from __future__ import annotations

import csv
import html
import io
import math
from collections import Counter
from pathlib import Path
from typing import Any

from lensmass.core.errors import LensInputError, in_words
from lensmass.core.grading import (
    DEFAULT_TOLERANCE,
    GRADABLE,
    class_mistakes,
    describe_explanation,
    grade_answers,
    plural,
    summarise_student,
)
from lensmass.io.atomic import write_text_atomic
from lensmass.io.manifest import parse_number, read_table_cells

REPORT_COLUMNS = ("student", "quantity", "submitted", "expected", "relative_error", "verdict", "diagnosis")
INPUT_COLUMNS = ("theta_e_arcsec", "z_l", "z_s")


def grade_class(path: str | Path, cosmo, tolerance: float = DEFAULT_TOLERANCE) -> list[dict[str, Any]]:
    """Grade every student of a submissions table; returns the report rows (with ``mistakes``)."""
    names, cells = read_table_cells(path, "submissions table")
    lowered = {n.lower(): n for n in names}
    missing = [c for c in ("student",) + INPUT_COLUMNS if c not in lowered]
    if missing:
        raise LensInputError(
            f"The submissions table '{path}' lacks column(s) {', '.join(missing)}: it needs student, "
            "theta_e_arcsec, z_l, z_s and the answers (for example mass_einstein_msun)."
        )
    quantities = [q for q in GRADABLE if q in lowered]
    if not quantities:
        raise LensInputError(
            f"The submissions table '{path}' has no answer column: add any of {', '.join(GRADABLE)}."
        )
    if not (math.isfinite(tolerance) and 0 < tolerance < 1):
        raise LensInputError(f"The tolerance must be a fraction between 0 and 1 (for example 0.05), got {tolerance}.")
    report: list[dict[str, Any]] = []
    for i, raw in enumerate(cells, start=1):
        student = raw.get(lowered["student"], "").strip() or f"row {i}"
        answers, bad_answer, blank = {}, {}, []
        for q in quantities:
            text = raw.get(lowered[q], "")
            try:
                value = parse_number(text, q)
            except ValueError as exc:
                bad_answer[q] = (text, str(exc))
                continue
            if value is not None:
                answers[q] = value
            else:
                blank.append(q)
        try:
            lens = [parse_number(raw.get(lowered[c], ""), c) for c in INPUT_COLUMNS]
            if any(v is None for v in lens):
                absent = [c for c, v in zip(INPUT_COLUMNS, lens) if v is None]
                raise LensInputError(f"the row has no {', '.join(absent)}")
            theta_e, z_l, z_s = lens
            graded = grade_answers(answers, theta_e, z_l, z_s, cosmo, tolerance) if answers else []
        except (ValueError, LensInputError) as exc:
            reason = in_words(str(exc)).rstrip(".")
            graded = [_ungradable(q, v, f"not graded: {reason}") for q, v in answers.items()]
        for row in graded:
            report.append({"student": student, **row})
        for q, (text, why) in bad_answer.items():
            report.append({"student": student, **_ungradable(q, math.nan, f"not graded: {why}"), "submitted_text": text})
        for q in blank:
            report.append({"student": student, **_ungradable(q, math.nan, "no answer was submitted"),
                           "verdict": "missing"})
    return report


def _ungradable(quantity: str, submitted: float, diagnosis: str) -> dict[str, Any]:
    return {"quantity": quantity, "submitted": submitted, "expected": math.nan, "relative_error": math.nan,
            "verdict": "fail", "diagnosis": diagnosis, "mistakes": []}


def _cell(value) -> str:
    """A CSV cell: floats in full precision (NaN empty), text made safe for spreadsheets."""
    from lensmass.io.spreadsheet import spreadsheet_safe

    if isinstance(value, float):
        return "" if not math.isfinite(value) else repr(value)
    return spreadsheet_safe(str(value))


def report_csv_text(report: list[dict[str, Any]]) -> str:
    """The report as CSV text (columns :data:`REPORT_COLUMNS`)."""
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(REPORT_COLUMNS)
    for row in report:
        submitted = row.get("submitted_text") if "submitted_text" in row else row["submitted"]
        writer.writerow([_cell(submitted if c == "submitted" else row[c]) for c in REPORT_COLUMNS])
    return buf.getvalue()


def write_report_csv(path: str | Path, report: list[dict[str, Any]]) -> None:
    """Write the report CSV atomically."""
    write_text_atomic(path, report_csv_text(report))


def summary_counts(report: list[dict[str, Any]]) -> dict[str, Any]:
    """Counts per verdict and quantity, per-student summaries and the class's mistakes by student.

    ``mistakes`` lists (explanation, number of students): each student counts once, under the
    mistake that explains most of their failed answers (:func:`lensmass.core.grading.summarise_student`).
    """
    verdicts = Counter(r["verdict"] for r in report)
    per_quantity: dict[str, Counter] = {}
    for r in report:
        if r["quantity"]:
            per_quantity.setdefault(r["quantity"], Counter())[r["verdict"]] += 1
    students = list(dict.fromkeys(r["student"] for r in report))
    quantities = [q for q in GRADABLE if q in per_quantity]
    summaries = [summarise_student(s, [r for r in report if r["student"] == s], quantities) for s in students]
    all_pass = [x.student for x in summaries if not x.failed and x.passed and not x.missing]
    return {"verdicts": dict(verdicts), "per_quantity": {q: dict(c) for q, c in per_quantity.items()},
            "mistakes": class_mistakes(summaries), "students": students, "all_pass": all_pass,
            "summaries": summaries, "n_answers": verdicts.get("pass", 0) + verdicts.get("fail", 0)}


def summary_sentence(report: list[dict[str, Any]]) -> str:
    """One line for the terminal and the window: counts, and the most common mistake by students."""
    s = summary_counts(report)
    v = s["verdicts"]
    line = (f"{plural(len(s['students']), 'student')}, {plural(s['n_answers'], 'answer')}: {v.get('pass', 0)} pass, "
            f"{v.get('fail', 0)} fail")
    if v.get("missing"):
        line += f", {v['missing']} missing"
    if s["mistakes"]:
        n = s["mistakes"][0][1]
        top = [describe_explanation(keys) for keys, count in s["mistakes"] if count == n]
        if len(top) == 1:
            line += f"; most common mistake ({plural(n, 'student')}): {top[0]}"
        else:
            line += f"; most common mistakes ({plural(n, 'student')} each): {'; '.join(top)}"
    return line


def summary_html(report: list[dict[str, Any]], *, title: str, cosmology: str, tolerance: float) -> str:
    """A self-contained HTML page: counts per verdict and quantity, the common mistakes, every row."""
    s = summary_counts(report)
    e = html.escape
    parts = [
        "<!DOCTYPE html>", "<html lang='en'><head><meta charset='utf-8'>", f"<title>{e(title)}</title>",
        "<style>body{font-family:sans-serif;margin:2em;max-width:70em}table{border-collapse:collapse;margin:1em 0}"
        "td,th{border:1px solid #999;padding:.25em .6em;text-align:left}th{background:#eee}"
        ".pass{color:#075}.fail{color:#a10}.num{text-align:right;font-variant-numeric:tabular-nums}</style>",
        "</head><body>", f"<h1>{e(title)}</h1>",
        f"<p>Expected values: angular-diameter distances in {e(cosmology)}, Sigma_cr = c^2 D_s / (4 pi G D_l D_ls), "
        "M(&lt;theta_E) = pi Sigma_cr (D_l theta_E)^2, sigma_SIS from theta_E = 4 pi (sigma/c)^2 D_ls/D_s "
        f"(Narayan &amp; Bartelmann 1996; Hogg 1999). An answer passes within {tolerance:.3g} relative error.</p>",
        f"<p>{plural(len(s['students']), 'student')}, {plural(s['n_answers'], 'answer')}: "
        f"<span class='pass'>{s['verdicts'].get('pass', 0)} pass</span>, "
        f"<span class='fail'>{s['verdicts'].get('fail', 0)} fail</span>, "
        f"{s['verdicts'].get('missing', 0)} missing; "
        f"{plural(len(s['all_pass']), 'student')} answered everything and passed every answer.</p>",
        "<h2>By student</h2><table><tr><th>student</th><th>pass</th><th>fail</th><th>missing</th>"
        "<th>the mistake that explains the failed answers</th></tr>",
    ]
    for x in s["summaries"]:
        why = describe_explanation(x.explanation) if x.explanation else (
            "no known mistake matches" if len(x.failed) > len(x.not_graded) else "")
        if x.explanation:
            why += f" ({x.explained} of {len(x.failed) - len(x.not_graded)} failed)"
        if x.not_graded:
            why += ("; " if why else "") + "not graded: " + ", ".join(x.not_graded)
        parts.append(f"<tr><td>{e(x.student)}</td><td class='num'>{len(x.passed)}</td>"
                     f"<td class='num'>{len(x.failed)}</td><td>{e(', '.join(x.missing))}</td><td>{e(why)}</td></tr>")
    parts.append("</table><h2>By quantity</h2><table><tr><th>quantity</th><th>unit</th><th>pass</th><th>fail</th>"
                 "<th>missing</th></tr>")
    for q in GRADABLE:
        if q in s["per_quantity"]:
            c = s["per_quantity"][q]
            parts.append(f"<tr><td>{e(q)}</td><td>{e(GRADABLE[q])}</td><td class='num'>{c.get('pass', 0)}</td>"
                         f"<td class='num'>{c.get('fail', 0)}</td><td class='num'>{c.get('missing', 0)}</td></tr>")
    parts.append("</table><h2>Common mistakes</h2>")
    if s["mistakes"]:
        parts.append("<p>Each student counts once, under the mistake that explains most of their failed answers.</p>"
                     "<table><tr><th>mistake</th><th>students</th></tr>")
        for keys, n in s["mistakes"]:
            parts.append(f"<tr><td>{e(describe_explanation(keys))}</td><td class='num'>{n}</td></tr>")
        parts.append("</table>")
    else:
        parts.append("<p>No failed answer matched a known mistake.</p>")
    parts.append("<h2>Every answer</h2><table><tr>" + "".join(f"<th>{c}</th>" for c in REPORT_COLUMNS) + "</tr>")
    for r in report:
        cells = []
        for c in REPORT_COLUMNS:
            v = r.get("submitted_text", r["submitted"]) if c == "submitted" else r[c]
            text = f"{v:.5g}" if isinstance(v, float) and math.isfinite(v) else ("" if isinstance(v, float) else str(v))
            cls = f" class='{r['verdict']}'" if c == "verdict" else (" class='num'" if isinstance(v, float) else "")
            cells.append(f"<td{cls}>{e(text)}</td>")
        parts.append("<tr>" + "".join(cells) + "</tr>")
    parts.append("</table></body></html>")
    return "\n".join(parts) + "\n"


def write_summary_html(path: str | Path, report: list[dict[str, Any]], *, title: str, cosmology: str,
                       tolerance: float) -> None:
    """Write the HTML summary atomically."""
    write_text_atomic(path, summary_html(report, title=title, cosmology=cosmology, tolerance=tolerance))
