"""Reports for papers and reviews: Markdown, a LaTeX tabular, or one self-contained HTML file.

Inputs are certificate files (each re-checked by the trusted checker before it is shown),
gate results (gate.json from `certify gate --out`) and sweep folders. Every number is an
outward-rounded decimal of an enclosure with only the digits the enclosure supports.
"""

from __future__ import annotations

import hashlib
import html
import json
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path

from ..errors import InputError
from ..model.decimal import bounds_text, honest_digits, value_text

CAUTIONS = [
    "What a certificate proves: a statement about the mathematical model exactly as written in "
    "it, at the stated parameters (for every parameter in a stated box): that the enclosure "
    "holds exactly one equilibrium, with the stated numbers of stable and unstable directions, "
    "or that the region holds exactly the stated number of equilibria.",
    "What it does not prove: that the model represents the physical system faithfully, "
    "anything outside the stated boxes and regions, or anything about undecided cells and "
    "claims.",
    "Safety-relevant decisions rest on the applicable codes and licensed professional "
    "practice; a certificate can support that judgement, never replace it.",
]


DIGITS = ("Digits: 1.234… means every value of the enclosure begins with the digits 1.234 "
          "(a '?' that no digit is shared); the bounds in brackets are rounded outward, so "
          "the printed interval contains the exact enclosure.")


def certain_digits(lo: Fraction, hi: Fraction) -> str:
    """Return the leading decimal digits shared by every number in [lo, hi] ('' if none).

    Truncation toward zero: '1.234' for [1.2344, 1.2347] means every value lies in
    [1.234, 1.235) (for a negative enclosure, in (-1.235, -1.234]); '1.23e4' means
    [12300, 12400). An enclosure touching or containing 0 has no certain digits here.
    """
    if lo == hi:
        a, b = bounds_text(lo, hi, honest_digits(lo, hi))
        return a if a == b else ""
    if lo <= 0 <= hi:
        return ""
    sign = "-" if hi < 0 else ""
    a, b = (-hi, -lo) if sign else (lo, hi)
    best = ""
    for k in range(-400, 400):  # k decimals; negative k: tens, hundreds, ...
        scale = Fraction(10) ** k
        ta, tb = int(a * scale), int(b * scale)  # floor, as a, b > 0
        if ta != tb:
            break
        if ta == 0:
            continue
        digits = str(ta)
        if k < 0:
            best = digits[0] + ("." + digits[1:] if len(digits) > 1 else "") + \
                f"e{len(digits) - 1 - k}"
        elif k == 0:
            best = digits
        else:
            padded = digits.rjust(k + 1, "0")
            best = padded[:-k] + "." + padded[-k:]
    return sign + best if best else ""


def enclosure_cell(lo: Fraction, hi: Fraction) -> tuple[str, str, str]:
    """Return (certain digits, lower bound rounded down, upper bound rounded up)."""
    a, b = bounds_text(lo, hi, honest_digits(lo, hi))
    return certain_digits(lo, hi), a, b


@dataclass
class Row:
    """One certified statement."""

    source: str
    model: str
    parameters: str
    statement: str
    enclosures: list = field(default_factory=list)  # (variable, digits, lo, hi)
    stable: str = ""
    unstable: str = ""
    sha256: str = ""


@dataclass
class Report:
    """What a report shows."""

    rows: list = field(default_factory=list)
    gates: list = field(default_factory=list)   # (file, passed, [(name, status, expected, proved)])
    sweeps: list = field(default_factory=list)  # (folder, manifest, summary rows, map svg, png)
    rejected: list = field(default_factory=list)  # (file, reason)


def _params(parameters: dict) -> str:
    return ", ".join(f"{k} = {value_text(lo, hi)}" for k, (lo, hi) in parameters.items()) \
        or "none"


def _certificate_row(path: Path, data: bytes, arithmetic: str) -> Row:
    from ..check import check, load

    verified = check(load(data), arithmetic)
    doc = json.loads(data)
    c = verified.claim
    row = Row(source=str(path), model=doc["model"]["name"],
              parameters=_params(verified.parameters), statement="",
              sha256=hashlib.sha256(data).hexdigest())
    kind = verified.kind
    n = len(verified.variables)
    if c["verdict"] == "hyperbolic":
        from ..vocabulary import type_word

        stable = c["stable_dimension"]
        row.statement = (f"exactly one {'equilibrium' if kind == 'flow' else 'fixed point'} "
                         f"in the box: {type_word(kind, stable, n - stable)}")
        if doc.get("period", 1) != 1:
            row.statement += f" (period {doc['period']})"
        row.stable, row.unstable = str(c["stable_dimension"]), str(c["unstable_dimension"])
        for i, v in enumerate(verified.variables):
            lo = min(e[i][0] for e in verified.enclosures)
            hi = max(e[i][1] for e in verified.enclosures)
            row.enclosures.append((v, *enclosure_cell(lo, hi)))
    elif c["verdict"] == "count":
        row.statement = f"exactly {c['count']} equilibria in the region"
        dims = c.get("stable_dimensions", [])
        row.stable = ", ".join(str(d) for d in dims) or "-"
        row.unstable = ", ".join(str(n - d) for d in dims) or "-"
        inside = [z for z in c.get("zeros", []) if z.get("inside")]
        for j, z in enumerate(inside, 1):
            for v, (lo, hi) in zip(verified.variables, z["enclosure"]):
                row.enclosures.append((f"{v} ({j})" if len(inside) > 1 else v,
                                       *enclosure_cell(lo, hi)))
    else:
        row.statement = "not hyperbolic: an eigenvalue exactly on the axis"
    return row


def collect(inputs: list[str], arithmetic: str = "both") -> Report:
    """Read every input (certificates, gate.json, sweep folders) into a Report."""
    from ..check import CertificateRejected

    report = Report()
    for name in inputs:
        path = Path(name)
        if path.is_dir():
            if (path / "manifest.json").is_file():
                report.sweeps.append(_sweep(path))
                continue
            if (path / "gate.json").is_file():
                path = path / "gate.json"
            else:
                raise InputError("a folder to report on is a sweep (manifest.json) or gate "
                                 "output (gate.json)", name)
        try:
            data = path.read_bytes()
        except OSError as exc:
            raise InputError(f"cannot read ({exc.strerror})", name) from None
        try:
            doc = json.loads(data)
        except ValueError:
            raise InputError("not a JSON file (expected a certificate, gate.json or a sweep "
                             "folder)", name) from None
        if isinstance(doc, dict) and doc.get("format") == "certify-gate":
            report.gates.append(_gate(path, doc, arithmetic, report))
            continue
        try:
            report.rows.append(_certificate_row(path, data, arithmetic))
        except CertificateRejected as exc:
            report.rejected.append((str(path), f"{exc.code} at {exc.where}: {exc.reason}"))
    return report


def _gate(path: Path, doc: dict, arithmetic: str, report: Report):
    from ..check import CertificateRejected

    lines = []
    for c in doc.get("claims", []):
        sha = ""
        if c.get("certificate"):
            cert = Path(c["certificate"])
            if not cert.is_absolute() and not cert.exists():
                cert = path.parent / cert.name
            try:
                data = cert.read_bytes()
                row = _certificate_row(cert, data, arithmetic)
                report.rows.append(row)
                sha = row.sha256
            except OSError:
                sha = "(certificate missing)"
            except CertificateRejected as exc:
                report.rejected.append((str(cert), exc.reason))
                sha = "(certificate REJECTED)"
        lines.append((c["name"], c["status"], c["expected"], c["proved"], sha))
    return (doc.get("title") or str(path), doc.get("passed", False), lines)


def _sweep(folder: Path):
    from .sweep_report import summarize
    from .sweep_store import read_manifest, read_results

    manifest = read_manifest(folder)
    summary = summarize(read_results(folder))
    svg = (folder / "map.svg").read_text() if (folder / "map.svg").is_file() else None
    png = folder / "map.png" if (folder / "map.png").is_file() else None
    summary["certificate_files"] = sum(1 for _ in (folder / "certificates").glob("*.json"))
    return (str(folder), manifest, summary, svg, png)


# ---------------------------------------------------------------- renderers

def _enclosure_text(row: Row, fmt: str) -> str:
    parts = []
    for v, digits, lo, hi in row.enclosures:
        exact = lo == hi
        if fmt == "latex":
            shown = digits + ("" if exact else r"\ldots") if digits else "?"
            parts.append(f"{_tex(v)} $= {shown}$" + ("" if exact else f" $[{lo}, {hi}]$"))
        else:
            shown = digits + ("" if exact else "…") if digits else "?"
            parts.append(f"{v} = {shown}" + ("" if exact else f" [{lo}, {hi}]"))
    return "; ".join(parts) or ("--" if fmt == "latex" else "—")


def _tex(s: str) -> str:
    out = s
    for a, b in (("\\", r"\textbackslash{}"), ("&", r"\&"), ("%", r"\%"), ("$", r"\$"),
                 ("#", r"\#"), ("_", r"\_"), ("{", r"\{"), ("}", r"\}"), ("~", r"\~{}"),
                 ("^", r"\^{}")):
        out = out.replace(a, b)
    return out


def markdown(report: Report) -> str:
    """Return the report as Markdown."""
    out = ["# Certified statements", ""]
    if report.rows:
        out += ["| model | parameters | statement | enclosure (certain digits [bounds]) | "
                "stable | unstable | SHA-256 of the certificate |",
                "|---|---|---|---|---|---|---|"]
        for r in report.rows:
            out.append(f"| {r.model} | {r.parameters} | {r.statement} | "
                       f"{_enclosure_text(r, 'md')} | {r.stable} | {r.unstable} | "
                       f"`{r.sha256}` |")
        out.append("")
    for file, passed, lines in report.gates:
        out += [f"## Gate: {file} — {'every claim holds' if passed else 'NOT every claim holds'}",
                "", "| claim | status | expected | proved |", "|---|---|---|---|"]
        out += [f"| {n} | {s} | {e} | {p} |" for n, s, e, p, _ in lines]
        out.append("")
    for folder, manifest, summary, _svg, png in report.sweeps:
        out += [f"## Sweep: {manifest.get('model_name', manifest['model'])}", "",
                f"Grid {', '.join(manifest['arguments']['grid'])}: {summary['cells']} cells, "
                f"each a closed parameter box; {summary['certified']} certified for every "
                f"parameter in the cell, {summary['undecided']} undecided; "
                f"{summary['certificate_files']} certificate files in "
                f"`{folder}/certificates` (re-check with `certify verify`).", "",
                "| verdict over the whole cell | cells |", "|---|---|"]
        out += [f"| {label} | {n} |" for label, n in summary["rows"]]
        if png:
            out += ["", f"![map of the parameter plane]({png})"]
        out.append("")
    for file, why in report.rejected:
        out.append(f"- REJECTED by the checker, not shown: {file} ({why})")
    out += ["", "## Cautions", ""] + [f"- {c}" for c in CAUTIONS] + [""]
    out.append(DIGITS)
    return "\n".join(out) + "\n"


def latex(report: Report) -> str:
    """Return a LaTeX fragment: tabulars a paper can \\input, and the cautions."""
    out = ["% certify report: \\input{} this file; needs no packages beyond standard LaTeX",
           "\\begin{tabular}{lllllll}", "\\hline",
           "model & parameters & statement & enclosure & stable & unstable & SHA-256 \\\\",
           "\\hline"]
    for r in report.rows:
        out.append(f"{_tex(r.model)} & {_tex(r.parameters)} & {_tex(r.statement)} & "
                   f"{_enclosure_text(r, 'latex')} & {r.stable} & {r.unstable} & "
                   f"\\texttt{{\\scriptsize {r.sha256}}} \\\\")
    out += ["\\hline", "\\end{tabular}"]
    for file, passed, lines in report.gates:
        out += ["", f"% gate {_tex(file)}", "\\begin{tabular}{lll}", "\\hline",
                "claim & status & proved \\\\", "\\hline"]
        out += [f"{_tex(n)} & {s} & {_tex(p)} \\\\" for n, s, _e, p, _ in lines]
        out += ["\\hline", "\\end{tabular}"]
    for folder, manifest, summary, _svg, png in report.sweeps:
        out += ["", f"% sweep {_tex(folder)}", "\\begin{tabular}{lr}", "\\hline",
                "verdict over the whole cell & cells \\\\", "\\hline"]
        out += [f"{_tex(label)} & {n} \\\\" for label, n in summary["rows"]]
        out += ["\\hline", "\\end{tabular}"]
        if png:
            out.append(f"% map: \\includegraphics{{{png}}} (needs graphicx)")
    out += ["", "% Cautions"] + [f"% {c}" for c in CAUTIONS]
    out.append("\\par\\smallskip{\\footnotesize " + " ".join(_tex(c) for c in CAUTIONS)
               + " " + _tex(DIGITS).replace("…", "\\ldots{}") + "}")
    return "\n".join(out) + "\n"


STYLE = """body{font-family:system-ui,sans-serif;margin:2rem;color:#222;max-width:80rem}
table{border-collapse:collapse;margin:1rem 0}td,th{border:1px solid #bbb;padding:.3rem .5rem;
text-align:left;vertical-align:top}th{background:#eee}code{font-size:.75rem;word-break:break-all}
.holds{color:#186a1c}.fails{color:#b00020;font-weight:bold}.undecided{color:#8a6100}
.caution{border-left:4px solid #b00020;padding:.5rem 1rem;background:#fff6f6}
.map svg{max-width:48rem;height:auto}"""


def page(report: Report) -> str:
    """Return the report as one self-contained HTML file (inline style and SVG maps)."""
    e = html.escape
    out = ["<!DOCTYPE html>", "<html lang=\"en\"><head><meta charset=\"utf-8\">",
           "<title>certify report</title>", f"<style>{STYLE}</style></head><body>",
           "<h1>Certified statements</h1>"]
    if report.rows:
        out.append("<table id=\"statements\"><thead><tr><th>model</th><th>parameters</th>"
                   "<th>statement</th><th>enclosure (certain digits [bounds])</th>"
                   "<th>stable</th><th>unstable</th><th>SHA-256 of the certificate</th>"
                   "</tr></thead><tbody>")
        for r in report.rows:
            out.append(f"<tr><td>{e(r.model)}</td><td>{e(r.parameters)}</td>"
                       f"<td>{e(r.statement)}</td><td>{e(_enclosure_text(r, 'html'))}</td>"
                       f"<td>{r.stable}</td><td>{r.unstable}</td>"
                       f"<td><code>{r.sha256}</code></td></tr>")
        out.append("</tbody></table>")
    for file, passed, lines in report.gates:
        out.append(f"<h2>Gate: {e(file)} — "
                   f"{'every claim holds' if passed else 'NOT every claim holds'}</h2>")
        out.append("<table class=\"gate\"><thead><tr><th>claim</th><th>status</th>"
                   "<th>expected</th><th>proved</th></tr></thead><tbody>")
        for n, s, ex, p, _ in lines:
            out.append(f"<tr><td>{e(n)}</td><td class=\"{e(s)}\">{e(s)}</td><td>{e(ex)}</td>"
                       f"<td>{e(p)}</td></tr>")
        out.append("</tbody></table>")
    for folder, manifest, summary, svg, _png in report.sweeps:
        out.append(f"<h2>Sweep: {e(manifest.get('model_name', manifest['model']))}</h2>")
        out.append(f"<p>Grid {e(', '.join(manifest['arguments']['grid']))}: "
                   f"{summary['cells']} cells, each a closed parameter box; "
                   f"{summary['certified']} certified for every parameter in the cell, "
                   f"{summary['undecided']} undecided; {summary['certificate_files']} "
                   f"certificate files in {e(folder)}/certificates (re-check with certify "
                   "verify).</p>")
        out.append("<table class=\"sweep\"><thead><tr><th>verdict over the whole cell</th>"
                   "<th>cells</th></tr></thead><tbody>")
        out += [f"<tr><td>{e(label)}</td><td>{n}</td></tr>" for label, n in summary["rows"]]
        out.append("</tbody></table>")
        if svg:
            body = svg[svg.find("<svg"):]
            out.append(f"<div class=\"map\" id=\"map\">{body}</div>")
    if report.rejected:
        out.append("<h2>Rejected by the checker (not shown above)</h2><ul>")
        out += [f"<li>{e(f)}: {e(w)}</li>" for f, w in report.rejected]
        out.append("</ul>")
    out.append("<div class=\"caution\"><h2>Cautions</h2><ul>")
    out += [f"<li>{e(c)}</li>" for c in CAUTIONS]
    out.append(f"</ul><p>{html.escape(DIGITS)}</p></div>")
    out.append("</body></html>")
    return "\n".join(out) + "\n"


RENDER = {"md": markdown, "latex": latex, "html": page}
