"""Speed ratios against floating-point baselines run in the same process.

    python benchmarks/run.py            all benchmarks
    python benchmarks/run.py eval       interval f and J against numpy floats
    python benchmarks/run.py certify    certified equilibria against float Newton + eigvals
    python benchmarks/run.py verify     the checker: cold process time, warm throughput
    python benchmarks/run.py widths     enclosure widths of the two arithmetics' functions
    python benchmarks/run.py scan       certified counts vs multi-start float Newton
    python benchmarks/run.py branches   one-piece widths and sweep proofs: plain vs first-order
    python benchmarks/run.py sweep      100 x 100 Brusselator sweep vs stacked float Newton +
                                        eigvals at the cell centres; memory at 10^5 cells
    python benchmarks/run.py hostile    time to refuse each file of the invalid corpus
    python benchmarks/run.py scale      certify time, ratio, certificate size and verify time
                                        against n (SCALE_SIZES=10,20,40 by default)
    python benchmarks/run.py --help     the list of benchmarks

Targets (issues): certification of Lorenz C+ at most 10x float Newton + eigvals; a sweep
certifies at least 1/20 of the float baseline's cells per second, under 500 MB at 10^5 cells.
"""

from __future__ import annotations

import sys
import time
from fractions import Fraction

import numpy as np

from certify import equilibrium, make_model
from certify.check.ad import evaluate
from certify.check.arith import ArbArithmetic
from certify.model.symbolic import FloatSystem
from certify.search.equilibrium import newton

LORENZ = make_model(["x", "y", "z"], ["sigma*(y - x)", "rho*x - y - x*z", "x*y - beta*z"],
                    {"sigma": 10, "beta": "8/3", "rho": 28})
WITH_EXP = make_model(["u", "v", "w"], ["a*exp(-v) - u*w", "u**2 - b*exp(w/10)*v",
                                        "tanh(u - v) - c*w"],
                      {"a": "1.5", "b": "0.7", "c": 2})


def per_call(fn, repeat: int) -> float:
    """Return seconds per call of fn, best of three runs."""
    best = float("inf")
    for _ in range(3):
        t = time.perf_counter()
        for _ in range(repeat):
            fn()
        best = min(best, (time.perf_counter() - t) / repeat)
    return best


def bench_eval() -> None:
    print("interval evaluation of f and J (one AD pass) vs numpy float f and J")
    for name, model, point in [("Lorenz (polynomial)", LORENZ, [1.0, 2.0, 3.0]),
                               ("3 variables with exp/tanh", WITH_EXP, [0.5, 0.4, 0.3])]:
        ar = ArbArithmetic(53)
        fs = FloatSystem(model)
        x = np.array(point)
        with ar.active():
            box = [ar.interval(Fraction(v) - Fraction(1, 1000), Fraction(v) + Fraction(1, 1000))
                   for v in point]
            params = [ar.interval(*model.parameters[p]) for p in model.parameters]
            t_iv = per_call(lambda: evaluate(model.tape, ar, box, params), 2000)
        t_fl = per_call(lambda: (fs.g(x), fs.dg(x)), 2000)
        print(f"  {name:28s} interval {t_iv * 1e6:8.1f} us   float {t_fl * 1e6:7.1f} us   "
              f"ratio {t_iv / t_fl:6.1f}x")


def random_system(n: int, seed: int = 1):
    """Return x' = A (x - x0) + small quadratic terms, A = V D V^-1 with a known spectrum."""
    rng = np.random.default_rng(seed)
    d = np.diag(np.concatenate([-rng.uniform(0.5, 2, n - 3), rng.uniform(0.5, 2, 3)]))
    v = np.eye(n) + rng.uniform(-0.3, 0.3, (n, n)) / np.sqrt(n)
    a = v @ d @ np.linalg.inv(v)
    names = [f"x{i}" for i in range(n)]
    eqs = []
    for i in range(n):
        terms = [f"({Fraction(float(a[i, j])).limit_denominator(10**6)})*{names[j]}"
                 for j in range(n)]
        terms.append(f"(1/100)*{names[(i + 1) % n]}**2")
        eqs.append(" + ".join(terms))
    return make_model(names, eqs, {}), names


def bench_certify() -> None:
    print("certified equilibrium (search + in-process check) vs float Newton + numpy eigvals")
    n30, names = random_system(30)
    for name, model, guess in [("Lorenz C+ (n=3)", LORENZ, {"x": 8, "y": 8, "z": 27}),
                               ("random system (n=30)", n30, {v: 0.01 for v in names})]:
        fs = FloatSystem(model)
        x0 = np.array([guess[v] for v in model.variables])

        def baseline():
            x = newton(fs, "flow", 1, x0)
            return np.linalg.eigvals(fs.dg(x))

        def certified():
            r = equilibrium(model, [guess])[0]
            assert r.verdict == "hyperbolic"
            return r

        reps = 20 if model.dimension < 10 else 2
        t_fl = per_call(baseline, reps * 10)
        t_ce = per_call(certified, reps)
        r = certified()
        print(f"  {name:24s} certified {t_ce * 1e3:9.2f} ms   float {t_fl * 1e3:7.3f} ms   "
              f"ratio {t_ce / t_fl:7.1f}x   ({r.type}, unstable dimension "
              f"{r.unstable_dimension})")


def bench_verify() -> None:
    import subprocess
    from pathlib import Path

    from certify.check import check, load

    cert = Path(__file__).resolve().parent.parent / "proofs" / "valid" / "lorenz-rho28-2.cert.json"
    print("certify verify on one n = 3 certificate (Lorenz C+)")
    runs = []
    for _ in range(5):
        t = time.perf_counter()
        subprocess.run([sys.executable, "-m", "certify.cli", "verify", str(cert)],
                       capture_output=True, check=True)
        runs.append(time.perf_counter() - t)
    print(f"  cold, whole process, both arithmetics: {min(runs) * 1e3:.0f} ms (target <= 500 ms)")
    data = load(cert.read_bytes())
    for arithmetic in ("flint", "python"):
        t = per_call(lambda a=arithmetic: check(data, a), 300)
        print(f"  warm, {arithmetic:6s}: {1 / t:7.0f} certificates per second")


def bench_scan() -> None:
    from certify.api import scan

    print("certified scan (every equilibrium in a region) vs multi-start float Newton")
    lorenz = LORENZ.with_region({"x": (Fraction(-30), Fraction(30)), "y": (Fraction(-30),
                                Fraction(30)), "z": (Fraction(-10), Fraction(60))})
    nine = make_model(["x", "y"], ["x - x**3", "y - y**3"], {},
                      region={"x": ["-1.5", "1.5"], "y": ["-1.5", "1.5"]})
    competition = make_model(["x", "y"], ["x*(1 - x/K - a*y)", "y*(1 - y - b*x)"],
                             {"K": ["1.5", "1.7"], "a": "1/2", "b": "1/2"},
                             region={"x": ["-0.5", "3"], "y": ["-0.5", "2"]})
    for name, model, per_side in [("Lorenz, rho = 28", lorenz, 20), ("9-zero system", nine, 20),
                                  ("competition K box", competition, 20)]:
        t = time.perf_counter()
        r = scan(model)
        t_scan = time.perf_counter() - t
        fs = FloatSystem(model)
        sides = [np.linspace(float(lo), float(hi), per_side) for lo, hi in
                 (model.region[v] for v in model.variables)]
        starts = np.stack(np.meshgrid(*sides), -1).reshape(-1, model.dimension)
        t = time.perf_counter()
        found = []
        for x0 in starts:
            try:
                x = newton(fs, "flow", 1, x0, iterations=40)
            except Exception:
                continue
            if not any(np.linalg.norm(x - y) < 1e-8 for y in found):
                found.append(x)
        t_float = time.perf_counter() - t
        print(f"  {name:18s} certified count {r.count} in {t_scan:6.2f} s ({r.pieces} piece(s), "
              f"{r.boxes} boxes, "
              f"{r.boxes / t_scan:7.0f} boxes/s)   float multi-start ({len(starts)} starts) "
              f"found {len(found)} in {t_float:6.2f} s   ratio {t_scan / t_float:5.2f}x")


def _one_piece(model, guess, name, centre, width, first_order) -> bool:
    from certify.search.equilibrium import certify_guess

    half = Fraction(width).limit_denominator(10**6) / 2
    m = model.with_parameters({name: (centre - half, centre + half)})
    a = certify_guess(m, guess, max_pieces=1, first_order=first_order)
    return a.verdict == "hyperbolic"


def _widest(model, guess, name, centre, first_order) -> float:
    lo, hi = 1e-5, 8.0
    if not _one_piece(model, guess, name, centre, lo, first_order):
        return 0.0
    for _ in range(14):
        mid = (lo * hi) ** 0.5
        lo, hi = (mid, hi) if _one_piece(model, guess, name, centre, mid, first_order) else \
            (lo, mid)
    return lo


def bench_branches() -> None:
    print("widest parameter box proved in one piece: plain intervals vs first-order forms")
    bruss = make_model(["x", "y"], ["a - (b + 1)*x + x**2*y", "b*x - x**2*y"],
                       {"a": 1, "b": "3/2"})
    cases = [("Lorenz C+ rho = 21", LORENZ, {"x": 7, "y": 7, "z": 20}, "rho", Fraction(21)),
             ("Lorenz C+ rho = 25", LORENZ, {"x": 8, "y": 8, "z": 24}, "rho", Fraction(25)),
             ("Lorenz C+ rho = 28", LORENZ, {"x": 8, "y": 8, "z": 27}, "rho", Fraction(28)),
             ("Brusselator b = 1.5", bruss, {"x": 1, "y": 1.5}, "b", Fraction(3, 2)),
             ("Brusselator b = 2.5", bruss, {"x": 1, "y": 2.5}, "b", Fraction(5, 2)),
             ("Brusselator b = 1.9", bruss, {"x": 1, "y": 1.9}, "b", Fraction(19, 10))]
    for label, model, guess, name, centre in cases:
        plain = _widest(model, guess, name, centre, False)
        first = _widest(model, guess, name, centre, True)
        print(f"  {label:22s} plain {plain:9.4g}   first-order {first:9.4g}   "
              f"ratio {first / plain if plain else float('inf'):6.1f}x")
    print("proofs for the 56-cell Lorenz sweep of C+ over rho in [2, 30] (the cell holding 470/19"
          " skipped)")
    from certify.search.equilibrium import certify_guess

    for first_order in (False, True):
        proofs, t = 0, time.perf_counter()
        for k in range(56):
            lo, hi = Fraction(2) + Fraction(k, 2), Fraction(2) + Fraction(k + 1, 2)
            if lo <= Fraction(470, 19) <= hi:
                continue
            m = LORENZ.with_parameters({"rho": (lo, hi)})
            z = float((lo + hi) / 2) - 1
            x = (8 / 3 * z) ** 0.5
            a = certify_guess(m, {"x": x, "y": x, "z": z}, first_order=first_order)
            proofs += len(a.certificate["pieces"]) if a.certificate else 0
        label = "first-order" if first_order else "plain      "
        print(f"  {label} {proofs:6d} proofs in {time.perf_counter() - t:6.2f} s")


def bench_widths() -> None:
    from certify.check.dyadic import DyadicArithmetic

    print("width of f(x) for a point x = 3/7 at 53 bits, in units of 2^-53 |f(x)|: arb vs ours")
    ours, theirs = DyadicArithmetic(53), ArbArithmetic(53)
    q = Fraction(3, 7)
    for fname in ["exp", "log", "sqrt", "sin", "cos", "tan", "tanh", "sinh", "cosh", "atan"]:
        row = []
        for ar in (theirs, ours):
            with ar.active():
                lo, hi = ar.bounds(ar.call(fname, ar.const(q), fname))
            row.append(float((hi - lo) / abs(hi)) * 2**53)
        print(f"  {fname:5s} flint {row[0]:6.1f}   python {row[1]:6.1f}")


MEMORY_PROBE = """
import resource, sys, tempfile
from certify import make_model
from certify.api import sweep
m = make_model(["x", "y"], ["-k*x + y/10", "-m*y"], {"k": 1, "m": 1}, guesses=[{"x": 0, "y": 0}])
r = sweep(m, {"k": ("1", "2", 316), "m": ("1", "2", 316)}, workers=2,
          out=tempfile.mkdtemp())
own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
kids = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
print(r.summary()["cells"], r.stats.proofs, own, kids, r.stats.seconds)
"""


def bench_sweep() -> None:
    import subprocess
    import tempfile

    from certify.api import sweep

    model = make_model(["x", "y"], ["a - (b + 1)*x + x**2*y", "b*x - x**2*y"],
                       {"a": 1, "b": 2}, guesses=[{"x": 1.2, "y": 2.5}])
    n = 100
    # float baseline: stacked Newton from the same start at every cell centre, then eigvals
    best = np.inf
    for _ in range(5):  # best of five: the baseline at its fastest
        t = time.perf_counter()
        a, b = np.meshgrid(0.5 + 1.5 * (np.arange(n) + 0.5) / n, 1 + 4 * (np.arange(n) + 0.5) / n)
        a, b = a.ravel(), b.ravel()
        x, y = np.full(a.shape, 1.2), np.full(a.shape, 2.5)
        for _ in range(30):
            f = np.stack([a - (b + 1) * x + x * x * y, b * x - x * x * y], axis=1)
            jac = np.empty((a.size, 2, 2))
            jac[:, 0, 0], jac[:, 0, 1] = -(b + 1) + 2 * x * y, x * x
            jac[:, 1, 0], jac[:, 1, 1] = b - 2 * x * y, -x * x
            step = np.linalg.solve(jac, f[:, :, None])[:, :, 0]
            x, y = x - step[:, 0], y - step[:, 1]
        np.linalg.eigvals(jac)
        best = min(best, time.perf_counter() - t)
    base = best
    result = sweep(model, {"a": ("0.5", "2", n), "b": ("1", "5", n)}, workers=2,
                   out=tempfile.mkdtemp())
    s, st = result.summary(), result.stats
    rate, base_rate = s["certified"] / st.seconds, n * n / base
    print(f"sweep, Brusselator {n} x {n} on 2 workers, --guess, no refinement:")
    print(f"  certified {s['certified']} of {n * n} cells in {st.seconds:.1f} s = {rate:.0f} "
          f"cells/s; float baseline {base * 1e3:.1f} ms = {base_rate:.0f} cells/s")
    print(f"  ratio {rate / base_rate:.4f} (target >= 0.05); {st.proofs} proofs tried on "
          f"{st.blocks} blocks = {st.proofs / (n * n):.3f} proofs per cell")
    out = subprocess.run([sys.executable, "-c", MEMORY_PROBE], capture_output=True, text=True,
                         check=True).stdout.split()
    cells, proofs, own, kids, seconds = int(out[0]), int(out[1]), int(out[2]), int(out[3]), \
        float(out[4])
    print(f"  memory at {cells} cells (a linear model, {proofs} proof(s), {seconds:.1f} s): "
          f"driver peak {own / 1024:.0f} MB, largest worker {kids / 1024:.0f} MB "
          "(target < 500 MB)")


def bench_hostile() -> None:
    """Time to refuse each file of the invalid corpus, both arithmetics (target: under 1 s)."""
    import json
    from pathlib import Path

    from certify.check import CertificateRejected, check, load

    print("refusing the invalid corpus (both arithmetics, warm process)")
    folder = Path(__file__).resolve().parent.parent / "proofs" / "invalid"
    rows = []
    for name in sorted(json.loads((folder / "MANIFEST.json").read_text())):
        text = (folder / name).read_bytes()
        start = time.perf_counter()
        for arithmetic in ("flint", "python"):
            try:
                check(load(text), arithmetic)
            except CertificateRejected:
                pass
        rows.append((time.perf_counter() - start, name))
    for seconds, name in sorted(rows, reverse=True)[:5]:
        print(f"  {name:45s} {seconds * 1000:8.1f} ms")
    print(f"  slowest of {len(rows)}: {max(rows)[0]:.3f} s (target < 1 s)")


def brusselator_grid(cells: int, a: str = "2", b: str = "3", du: str = "1", dv: str = "8"):
    """Return the Brusselator on a 1-D grid of `cells` cells with reflecting ends (n = 2 cells),
    grid spacing 1, and a guess near the homogeneous state (a, b/a)."""
    names, eqs = [], []
    for i in range(cells):
        left, right = max(i - 1, 0), min(i + 1, cells - 1)
        u, v = f"u{i}", f"v{i}"
        lap_u = f"(u{left} - 2*{u} + u{right})"
        lap_v = f"(v{left} - 2*{v} + v{right})"
        names += [u, v]
        eqs += [f"a - (b + 1)*{u} + {u}**2*{v} + du*{lap_u}",
                f"b*{u} - {u}**2*{v} + dv*{lap_v}"]
    guess = {}
    for i in range(cells):
        guess[f"u{i}"], guess[f"v{i}"] = float(a), float(b) / float(a)
    return make_model(names, eqs, {"a": a, "b": b, "du": du, "dv": dv}), guess


def bench_scale() -> None:
    """The curve in n: certify time, its ratio to float Newton + eigvals, certificate size, and
    the checker's time (flint). Sizes from SCALE_SIZES (default 10,20,40; 100 takes minutes)."""
    import json
    import os

    from certify import verify

    sizes = [int(v) for v in os.environ.get("SCALE_SIZES", "10,20,40").split(",")]
    print("scale: Brusselator on a 1-D grid (n = 2 cells), certify vs float Newton + eigvals")
    for n in sizes:
        model, guess = brusselator_grid(n // 2)
        fs = FloatSystem(model)
        x0 = np.array([guess[v] for v in model.variables])

        def baseline():
            x = newton(fs, "flow", 1, x0)
            return np.linalg.eigvals(fs.dg(x))

        t_fl = per_call(baseline, 5)
        t = time.perf_counter()
        r = equilibrium(model, [guess])[0]
        t_ce = time.perf_counter() - t
        size = len(json.dumps(r.certificate)) if r.certificate else 0
        t = time.perf_counter()
        if r.certificate:
            verify(r.certificate, "flint")
        t_ve = time.perf_counter() - t
        print(f"  n = {model.dimension:4d}  {r.verdict:10s} certify {t_ce:8.2f} s  float "
              f"{t_fl * 1e3:7.2f} ms  ratio {t_ce / t_fl:9.0f}x  certificate {size / 1e6:6.2f} MB"
              f"  verify (flint) {t_ve:6.2f} s  "
              + (f"unstable dimension {r.unstable_dimension}" if r.certificate else
                 f"({r.reason}: {r.message[:60]})"))


BENCHMARKS = {"sweep": (bench_sweep, "100 x 100 Brusselator sweep vs stacked float Newton + "
                                   "eigvals; memory at 10^5 cells (runs first: it forks)"),
              "eval": (bench_eval, "interval f and J against numpy floats"),
              "certify": (bench_certify, "certified equilibria against float Newton + eigvals"),
              "verify": (bench_verify, "the checker: cold process time, warm throughput"),
              "widths": (bench_widths, "enclosure widths of the two arithmetics' functions"),
              "scan": (bench_scan, "certified counts vs multi-start float Newton"),
              "branches": (bench_branches, "one-piece widths and sweep proofs: plain vs "
                                           "first-order"),
              "hostile": (bench_hostile, "time to refuse each file of the invalid corpus"),
              "scale": (bench_scale, "the curve in n (set SCALE_SIZES=10,20,...): certify vs "
                                     "float, certificate size, verify time")}


def main(argv: list[str] | None = None) -> int:
    """Run the named benchmarks (all by default) and print their ratios."""
    import argparse

    listing = "\n".join(f"  {name:10s}{text}" for name, (_, text) in BENCHMARKS.items())
    parser = argparse.ArgumentParser(
        prog="python benchmarks/run.py", formatter_class=argparse.RawDescriptionHelpFormatter,
        description="Speed ratios against floating-point baselines run in the same process.",
        epilog=f"benchmarks:\n{listing}")
    parser.add_argument("names", nargs="*", metavar="NAME", help="benchmarks to run (default: "
                        "all)")
    args = parser.parse_args(argv)
    unknown = [n for n in args.names if n not in BENCHMARKS]
    if unknown:
        parser.error(f"unknown benchmark {unknown[0]!r} (known: {', '.join(BENCHMARKS)})")
    for name in args.names or BENCHMARKS:
        BENCHMARKS[name][0]()
    return 0


if __name__ == "__main__":
    sys.exit(main())
