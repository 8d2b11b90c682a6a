"""The certify command line: inspect, equilibrium, scan, sweep, gate, report, verify."""

from __future__ import annotations

import argparse
import json
import sys
from fractions import Fraction
from pathlib import Path

from .settings import (DEFAULT_MAX_PRECISION, DEFAULT_PRECISION, SCAN_MAX_BOXES, SCAN_TIME_LIMIT,
                       SWEEP_MAX_BOXES)
from .version import __version__
from .errors import InputError

CAUTION = ("A certificate is a statement about the mathematical model as written, at the stated "
           "parameters, not about the physical system it stands for. In safety-relevant reviews "
           "it supports, and does not replace, the judgement required by the applicable codes "
           "and licensed practice.")

EXAMPLES = """examples:
  certify inspect examples/chemostat.toml
  certify equilibrium examples/chemostat.toml --out chemostat.cert.json
  certify equilibrium examples/chemostat.toml --set a=3.1..3.3 --guess u=2.9,v=0.35
  certify equilibrium examples/seasonal-map.toml --period 2
  certify scan examples/chemostat.toml --out chemostat-count.cert.json
  certify verify chemostat-1.cert.json
  certify sweep examples/fishery.toml --grid c=1..9:16 --grid p=4..6:12 --out fishery-sweep
  certify gate examples/chemostat-claims.toml --junit claims.xml --out gate-out
  certify report gate-out fishery-sweep --format html -o report.html

exit codes: 0 everything asked for is certified; 1 something is undecided, not hyperbolic or
rejected; 2 the input is bad (the message says where and why)."""


def _model_options(q) -> None:
    """Add the model file, --set and --json."""
    q.add_argument("model", metavar="MODEL", help="model file (TOML)")
    q.add_argument("--set", action="append", default=[], metavar="NAME=VALUE",
                   help="override a parameter: NAME=VALUE (exact, e.g. 0.1 or 8/3) or "
                        "NAME=LO..HI (every value in the interval); repeatable")
    q.add_argument("--json", action="store_true", help="print one JSON object on stdout")


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="certify", formatter_class=argparse.RawDescriptionHelpFormatter,
        description="Prove with interval arithmetic that equilibria of a model exist, are unique "
                    "in a box and are hyperbolic, and re-check the certificates.",
        epilog=EXAMPLES)
    p.add_argument("--version", action="version", version=f"certify {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    _search_parsers(sub)
    _sweep_parser(sub)
    _other_parsers(sub)
    return p


def _search_parsers(sub) -> None:
    """Add inspect, equilibrium and scan."""

    q = sub.add_parser("inspect", help="print the parsed model and its symbolic Jacobian")
    _model_options(q)

    q = sub.add_parser("equilibrium", help="certify the equilibria reached from guesses",
                       formatter_class=argparse.RawDescriptionHelpFormatter, epilog=EXAMPLES)
    _model_options(q)
    q.add_argument("--guess", action="append", default=[], metavar="u=2.9,v=0.35",
                   help="starting point for Newton's method; repeatable (default: the model's "
                        "[[guesses]])")
    q.add_argument("--period", type=int, default=1, metavar="K",
                   help="maps only: certify points of period K (fixed points of g^K)")
    q.add_argument("--precision", type=int, default=DEFAULT_PRECISION, metavar="BITS",
                   help=f"starting working precision in bits (default {DEFAULT_PRECISION})")
    q.add_argument("--max-precision", type=int, default=DEFAULT_MAX_PRECISION, metavar="BITS",
                   help="highest precision tried before answering undecided (default "
                        f"{DEFAULT_MAX_PRECISION})")
    q.add_argument("--out", metavar="CERT.json",
                   help="write the certificate here (several results: CERT-1.json, ...)")

    q = sub.add_parser("scan", help="find every equilibrium in a region and certify the count",
                       formatter_class=argparse.RawDescriptionHelpFormatter, epilog=EXAMPLES)
    _model_options(q)
    q.add_argument("--region", metavar="u=0..4,v=0..4",
                   help="the search box (default: the model's [region])")
    q.add_argument("--max-boxes", type=int, default=SCAN_MAX_BOXES, metavar="N",
                   help=f"stop after N boxes (default {SCAN_MAX_BOXES}); the count is then not "
                        "certified")
    q.add_argument("--time-limit", type=float, default=SCAN_TIME_LIMIT, metavar="SECONDS",
                   help=f"stop after this many seconds (default {SCAN_TIME_LIMIT:g})")
    q.add_argument("--out", metavar="CERT.json", help="write the certificate of the count here")


def _sweep_parser(sub) -> None:
    """Add sweep."""
    q = sub.add_parser("sweep", help="certify every cell of a parameter grid (each cell a box)",
                       formatter_class=argparse.RawDescriptionHelpFormatter, epilog=EXAMPLES)
    _model_options(q)
    q.add_argument("--grid", action="append", default=[], metavar="NAME=LO..HI:N",
                   help="sweep parameter NAME over N equal cells from LO to HI; repeatable")
    what = q.add_mutually_exclusive_group()
    what.add_argument("--guess", action="append", default=[], metavar="u=2.9,v=0.35",
                      help="track the equilibrium reached from this point (at the grid's "
                           "centre); repeatable (default: the model's [[guesses]])")
    what.add_argument("--scan", action="store_true",
                      help="certify the number of equilibria in the region in every cell")
    q.add_argument("--region", metavar="u=0..4,v=0..4",
                   help="with --scan: the search box (default: the model's [region])")
    q.add_argument("--max-boxes", type=int, default=SWEEP_MAX_BOXES, metavar="N",
                   help=f"with --scan: box budget of each proof (default {SWEEP_MAX_BOXES}); "
                        "a block over budget is cut")
    q.add_argument("--period", type=int, default=1, metavar="K",
                   help="maps only: certify points of period K")
    q.add_argument("--refine", type=int, default=0, metavar="DEPTH",
                   help="bisect undecided cells up to DEPTH more levels (default 0)")
    q.add_argument("--workers", type=int, default=None, metavar="K",
                   help="local worker processes (default: all cores; 1 runs in this process)")
    q.add_argument("--scheduler", metavar="tcp://HOST:PORT",
                   help="run the cells on this Dask distributed scheduler instead "
                        "(pip install 'certify[distributed]')")
    q.add_argument("--out", metavar="DIR", required=True,
                   help="the sweep's folder: results.jsonl, manifest.json, certificates/, maps")
    q.add_argument("--resume", action="store_true",
                   help="go on with an interrupted sweep in DIR (same model and arguments)")


def _other_parsers(sub) -> None:
    """Add gate, report and verify."""
    q = sub.add_parser("gate", help="certify every claim of a claims file (for CI and reviews)",
                       formatter_class=argparse.RawDescriptionHelpFormatter, epilog=EXAMPLES)
    q.add_argument("claims", metavar="CLAIMS.toml", help="claims file (TOML)")
    q.add_argument("--junit", metavar="FILE", help="also write JUnit XML (one test per claim)")
    q.add_argument("--out", metavar="DIR", help="keep every certificate and gate.json here")
    q.add_argument("--models-anywhere", action="store_true",
                   help="allow a model outside the claims file's folder")
    q.add_argument("--json", action="store_true", help="print one JSON object on stdout")

    q = sub.add_parser("report", help="a Markdown, LaTeX or HTML report of certified results",
                       formatter_class=argparse.RawDescriptionHelpFormatter, epilog=EXAMPLES)
    q.add_argument("inputs", nargs="+", metavar="INPUT",
                   help="certificate files, gate output (gate.json or its folder), sweep folders")
    q.add_argument("--format", choices=["md", "latex", "html"], default="md",
                   help="md (default), latex (a tabular to \\input) or html (one file)")
    q.add_argument("-o", "--output", metavar="FILE", help="write here instead of stdout")
    q.add_argument("--arithmetic", choices=["flint", "python", "both"], default="both",
                   help="arithmetic of the re-check of each certificate (default both)")

    q = sub.add_parser("verify", help="re-check certificate files with the trusted checker")
    q.add_argument("files", nargs="+", metavar="CERT.json")
    q.add_argument("--arithmetic", choices=["flint", "python", "both"], default="both",
                   help="interval arithmetic of the check: flint (python-flint balls), python "
                        "(our standard-library dyadic intervals) or both (default; a file is "
                        "VERIFIED only if every selected arithmetic accepts it)")
    q.add_argument("--json", action="store_true", help="print one JSON object on stdout")


def parse_assignments(items: list[str], option: str) -> dict[str, tuple[Fraction, Fraction]]:
    """Return {name: (lo, hi)} from NAME=VALUE and NAME=LO..HI texts."""
    from .model import parse_value

    out = {}
    for item in items:
        name, eq, value = item.partition("=")
        if not eq or not name.strip() or not value.strip():
            raise InputError(f"expected NAME=VALUE or NAME=LO..HI, found {item!r}", None, option)
        raw = value.split("..") if ".." in value else value
        if isinstance(raw, list) and len(raw) != 2:
            raise InputError(f"expected LO..HI, found {value!r}", None, option)
        out[name.strip()] = parse_value(raw if isinstance(raw, str) else [r.strip() for r in raw],
                                        None, f"{option} {name.strip()}")
    return out


def parse_guess(text: str) -> dict[str, float]:
    """Return {variable: value} from 'u=2.9,v=0.35'."""
    out = {}
    for item in text.split(","):
        assigned = parse_assignments([item], "--guess")
        for name, (lo, hi) in assigned.items():
            if lo != hi:
                raise InputError(f"a guess is a single number, found an interval for {name}",
                                 None, "--guess")
            out[name] = float(lo)
    return out


def _load(args):
    from .model import load_model

    model = load_model(args.model)
    overrides = parse_assignments(args.set, "--set")
    return model.with_parameters(overrides) if overrides else model


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the exit code."""
    parser = _parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 2
    try:
        if args.command == "inspect":
            return _inspect(args)
        if args.command == "equilibrium":
            return _equilibrium(args)
        if args.command == "scan":
            return _scan(args)
        if args.command == "sweep":
            return _sweep(args)
        if args.command == "gate":
            return _gate(args)
        if args.command == "report":
            return _report(args)
        return _verify(args)
    except InputError as exc:
        print(f"certify: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("certify: interrupted", file=sys.stderr)
        return 130


def _inspect(args) -> int:
    from .io import report

    model = _load(args)
    if args.json:
        print(json.dumps(report.model_json(model), indent=1))
    else:
        report.print_model(model)
    return 0


def _equilibrium(args) -> int:
    from .api import equilibrium
    from .io import report

    model = _load(args)
    guesses = [parse_guess(g) for g in args.guess] or None
    if args.out:
        writable_file(args.out, "--out")
    results = equilibrium(model, guesses, period=args.period, precision=args.precision,
                          max_precision=max(args.max_precision, args.precision),
                          arithmetics=("flint", "python") if args.out else ("flint",))
    if args.out:
        out = Path(args.out)
        with_cert = [r for r in results if r.certificate is not None]
        for k, r in enumerate(with_cert, 1):
            path = out if len(with_cert) == 1 else out.with_name(
                f"{out.name.removesuffix('.json').removesuffix('.cert')}-{k}"
                f"{'.cert.json' if out.name.endswith('.cert.json') else '.json'}")
            _write_json(r.certificate, path, "--out")
            r.certificate_path = str(path)
    if args.json:
        print(json.dumps(report.results_json(model, results), indent=1))
    else:
        report.print_results(model, results, CAUTION)
    return 0 if all(r.verdict == "hyperbolic" for r in results) else 1


def parse_region(text: str, model) -> dict[str, tuple[Fraction, Fraction]]:
    """Return {variable: (lo, hi)} from 'u=0..4,v=0..4' (every variable once)."""
    region = {}
    for item in text.split(","):
        region.update(parse_assignments([item], "--region"))
    for name, (lo, hi) in region.items():
        if name not in model.variables:
            raise InputError(f"'{name}' is not a variable", model.source, "--region")
        if lo == hi:
            raise InputError(f"the side for {name} has width 0", model.source, "--region")
    missing = [v for v in model.variables if v not in region]
    if missing:
        raise InputError(f"no side for {', '.join(missing)}", model.source, "--region")
    return region


def _scan(args) -> int:
    from .api import scan
    from .io import report

    model = _load(args)
    region = parse_region(args.region, model) if args.region else model.region
    if not region:
        raise InputError("no region: give --region or a [region] table", model.source, "region")
    if args.max_boxes < 1 or args.time_limit <= 0:
        raise InputError("the budget must be positive", None, "--max-boxes/--time-limit")
    if args.out:
        writable_file(args.out, "--out")
    with report.scan_progress(enabled=not args.json) as progress:
        result = scan(model, region, max_boxes=args.max_boxes, time_limit=args.time_limit,
                      progress=progress, arithmetics=("flint", "python") if args.out
                      else ("flint",))
    if args.out and result.certificate is not None:
        _write_json(result.certificate, args.out, "--out")
        result.certificate_path = args.out
    if args.json:
        print(json.dumps(report.scan_json(result), indent=1))
    else:
        report.print_scan(result, CAUTION)
    return 0 if result.count is not None else 1


def parse_grid(items: list[str]) -> dict:
    """Return {name: (lo, hi, n)} from NAME=LO..HI:N texts."""
    grid = {}
    for item in items:
        name, eq, rest = item.partition("=")
        span, colon, count = rest.rpartition(":")
        if not eq or not colon or ".." not in span or not name.strip():
            raise InputError(f"expected NAME=LO..HI:N, found {item!r}", None, "--grid")
        lo, _, hi = span.partition("..")
        try:
            n = int(count)
        except ValueError:
            raise InputError(f"the number of cells must be an integer, found {count!r}", None,
                             f"--grid {name.strip()}") from None
        if name.strip() in grid:
            raise InputError(f"'{name.strip()}' is given twice", None, "--grid")
        grid[name.strip()] = (lo.strip(), hi.strip(), n)
    return grid


def _sweep(args) -> int:
    from .api import sweep
    from .io import sweep_report
    from .model import load_model

    model = load_model(args.model)
    overrides = parse_assignments(args.set, "--set")
    grid = parse_grid(args.grid)
    if not grid:
        raise InputError("give at least one --grid NAME=LO..HI:N", None, "--grid")
    if args.workers is not None and not 1 <= args.workers <= 1024:
        raise InputError("--workers must be between 1 and 1024", None, "--workers")
    if args.max_boxes < 1:
        raise InputError("the budget must be positive", None, "--max-boxes")
    if args.region and not args.scan:
        raise InputError("--region goes with --scan", None, "--region")
    region = parse_region(args.region, model) if args.region else None
    guesses = [parse_guess(g) for g in args.guess] or None
    writable_folder(args.out, "--out", create=False)
    with sweep_report.SweepProgress(enabled=not args.json) as progress:
        result = sweep(args.model, grid, guesses=guesses, scan=args.scan, region=region,
                       parameters=overrides or None, refine=args.refine, period=args.period,
                       workers=args.workers, scheduler=args.scheduler, out=args.out,
                       resume=args.resume, max_boxes=args.max_boxes, progress=progress)
    pictures, note = [], None
    try:
        pictures = sweep_report.draw_maps(result.folder, result.manifest)
        if not pictures:
            note = "no map: maps are drawn for one or two grid parameters"
    except ImportError:
        note = "no map drawn: matplotlib is not installed (pip install 'certify[plot]')"
    if args.json:
        out = sweep_report.sweep_json(result, pictures)
        if note:
            out["note"] = note
        print(json.dumps(out, indent=1))
    else:
        sweep_report.print_summary(result, CAUTION, pictures, note)
    summary = result.summary()
    return 0 if summary["undecided"] == 0 and summary["cells"] == result.manifest["cells"] else 1


def writable_file(path: str, option: str) -> None:
    """Refuse, before any work, an output file that could not be written."""
    import tempfile

    target = Path(path)
    if target.is_dir():
        raise InputError("this is a folder; give a file name", path, option)
    folder = target.resolve().parent
    if not folder.is_dir():
        raise InputError("the folder does not exist", path, option)
    try:
        tempfile.TemporaryFile(dir=folder).close()
    except OSError as exc:
        raise InputError(f"cannot write in the folder ({exc.strerror})", path, option) from None


def writable_folder(path: str, option: str, create: bool = True) -> Path:
    """Refuse, before any work, an output folder that could not be written; create it if asked.

    Without create, a missing folder is only checked to be creatable (its nearest existing
    parent writable), so that a run refused later for bad input leaves nothing behind.
    """
    folder = Path(path)
    if folder.exists() and not folder.is_dir():
        raise InputError("this is a file; give a folder", path, option)
    if create:
        try:
            folder.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise InputError(f"cannot create the folder ({exc.strerror})", path,
                             option) from None
    existing = folder.resolve()
    while not existing.exists():
        existing = existing.parent
    if not existing.is_dir():
        raise InputError(f"cannot create the folder ({existing} is a file)", path, option)
    writable_file(str(existing / "probe"), option)
    return folder


def _write_json(doc: dict, path: str | Path, option: str) -> None:
    from .io.files import json_bytes

    _atomic_text(str(path), json_bytes(doc), option)


def _atomic_text(path: str, data: bytes, option: str) -> None:
    from .io.files import write_atomic

    writable_file(path, option)
    try:
        write_atomic(path, data)
    except OSError as exc:
        raise InputError(f"cannot write the file ({exc.strerror})", path, option) from None


def _gate(args) -> int:
    from . import gate

    claims = gate.load_claims(args.claims, args.models_anywhere)
    out = writable_folder(args.out, "--out") if args.out else None
    if args.junit:
        writable_file(args.junit, "--junit")
    outcomes = gate.evaluate(claims, out, ("flint", "python") if out else ("flint",))
    result = gate.gate_json(claims, outcomes)
    if out is not None:
        _write_json(result, out / "gate.json", "--out")
    if args.junit:
        _atomic_text(args.junit, gate.junit_xml(claims, outcomes), "--junit")
    if args.json:
        print(json.dumps(result, indent=1))
    else:
        words = {"holds": "HOLDS", "fails": "FAILS", "undecided": "UNDECIDED"}
        for o in outcomes:
            print(f"{words[o.status]:9s} {o.claim.name}: expected {o.claim.expected_text()}; "
                  f"{o.proved}")
        held = sum(o.status == "holds" for o in outcomes)
        print(f"{held} of {len(outcomes)} claims hold"
              + ("" if held == len(outcomes) else " - the gate fails"))
        print(CAUTION)
    return 0 if result["passed"] else 1


def _report(args) -> int:
    from .io import publish

    if args.output:
        writable_file(args.output, "-o")
    report = publish.collect(args.inputs, args.arithmetic)
    if args.output:  # maps referenced relative to the report
        import os

        base = Path(args.output).resolve().parent
        report.sweeps = [(f, m, s, svg, os.path.relpath(Path(png).resolve(), base) if png
                          else None) for f, m, s, svg, png in report.sweeps]
    text = publish.RENDER[args.format](report)
    if args.output:
        _atomic_text(args.output, text.encode(), "-o")
    else:
        sys.stdout.write(text)
    return 0 if not report.rejected else 1


def _verify(args) -> int:
    from .api import verify
    from .check import CertificateRejected
    from .io import report

    rows, ok = [], True
    for name in args.files:
        try:
            verified = verify(name, args.arithmetic)
            rows.append({"file": name, "status": "VERIFIED",
                         "claim": report.claim_text(verified)})
        except CertificateRejected as exc:
            ok = False
            rows.append({"file": name, "status": "REJECTED", "code": exc.code,
                         "where": exc.where, "reason": exc.reason})
    if args.json:
        print(json.dumps({"arithmetic": args.arithmetic, "files": rows}, indent=1))
    else:
        for row in rows:
            if row["status"] == "VERIFIED":
                print(f"{row['file']}: VERIFIED ({row['claim']})")
            else:
                print(f"{row['file']}: REJECTED: {row['code']} at {row['where']}: "
                      f"{row['reason']}")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
