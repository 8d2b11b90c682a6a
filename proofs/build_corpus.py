"""Rebuild the certificate corpora: proofs/valid/ (must verify) and proofs/invalid/ (must not).

    python proofs/build_corpus.py

Valid files certify every bundled example and the published cases used as check values in the
tests; invalid files are tampered copies and malformed files, each listed in
proofs/invalid/MANIFEST.json with the rejection code the checker must give.
"""

from __future__ import annotations

import copy
import json
import sys
from fractions import Fraction
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from certify import equilibrium, load_model, make_model  # noqa: E402
from certify.api import scan  # noqa: E402
from certify.io.files import write_certificate  # noqa: E402

BOTH = ("flint", "python")


def lorenz(rho):
    # Lorenz 1963
    return make_model(["x", "y", "z"], ["sigma*(y - x)", "rho*x - y - x*z", "x*y - beta*z"],
                      {"sigma": 10, "beta": "8/3", "rho": rho}, name="Lorenz 1963")


def brusselator(b):
    # Prigogine & Lefever 1968, a = 1
    return make_model(["x", "y"], ["a - (b + 1)*x + x**2*y", "b*x - x**2*y"], {"a": 1, "b": b},
                      name="Brusselator")


def logistic(r):
    # May 1976
    return make_model(["x"], ["r*x*(1 - x)"], {"r": r}, kind="map", name="logistic map")


CASES = [
    ("chemostat", load_model(HERE.parent / "examples" / "chemostat.toml"), None, 1),
    ("fishery", load_model(HERE.parent / "examples" / "fishery.toml"), None, 1),
    ("seasonal-map", load_model(HERE.parent / "examples" / "seasonal-map.toml"), None, 1),
    ("seasonal-map-period2", load_model(HERE.parent / "examples" / "seasonal-map.toml"), None, 2),
    ("lorenz-rho28", lorenz(28), [{"x": 0.1, "y": 0.1, "z": 0.1}, {"x": 8, "y": 8, "z": 27}], 1),
    ("lorenz-rho1", lorenz(1), [{"x": 0.01, "y": 0.01, "z": 0.01}], 1),
    ("lorenz-c-plus-rho20-24-box", lorenz(["20", "24"]), [{"x": 7, "y": 7, "z": 21}], 1),
    ("lorenz-c-plus-rho27-29-branch", lorenz(["27", "29"]), [{"x": 8, "y": 8, "z": 27}], 1),
    ("lorenz-c-plus-rho21-23-branch", lorenz(["21", "23"]), [{"x": 7, "y": 7, "z": 21}], 1),
    ("logistic-r2.4-2.6-branch", logistic(["2.4", "2.6"]), [{"x": 0.6}], 1),
    ("brusselator-sink", brusselator("3/2"), [{"x": 1.1, "y": 1.4}], 1),
    ("brusselator-source", brusselator("5/2"), [{"x": 1.1, "y": 2.4}], 1),
    ("brusselator-hopf", brusselator(2), [{"x": 1.1, "y": 1.9}], 1),
    ("logistic-r2.5", logistic("5/2"), [{"x": 0.6}], 1),
    ("logistic-r3", logistic(3), [{"x": 0.6}], 1),
    ("logistic-period2", logistic("16/5"), [{"x": 0.8}], 2),
    ("saddle-node", make_model(["x"], ["mu - x**2"], {"mu": "1/4"}, name="saddle-node"),
     [{"x": 0.6}, {"x": -0.4}], 1),
    ("cubic", make_model(["x"], ["alpha*x**3"], {"alpha": -1}, name="cubic"), [{"x": 0.5}], 1),
    ("transcendental", make_model(
        ["u", "v"], ["exp(-u) - v + sin(v)/4", "atan(u) - sqrt(v) + tanh(u*v)/5 + log(1 + v)/9"],
        {}, name="transcendental"), [{"u": 0.5, "v": 0.5}], 1),
]


COUNTS = [
    ("chemostat-count", load_model(HERE.parent / "examples" / "chemostat.toml")),
    ("fishery-count", load_model(HERE.parent / "examples" / "fishery.toml")),
    ("seasonal-map-count", load_model(HERE.parent / "examples" / "seasonal-map.toml")),
    ("lorenz-rho28-count", lorenz(28).with_region(
        {"x": (-30, 30), "y": (-30, 30), "z": (-10, 60)})),
    ("circle-hyperbola-count", make_model(["x", "y"], ["x**2 + y**2 - 4", "x*y - 1"], {},
                                          region={"x": ["-3", "3"], "y": ["-3", "3"]})),
    ("saddle-node-box-count", make_model(["x"], ["mu - x**2"], {"mu": ["1/4", "1"]},
                                         region={"x": ["-2", "2"]})),
    # Lotka-Volterra competition over K (zeros that travel: first-order forms in the count)
    ("competition-box-count", make_model(["x", "y"], ["x*(1 - x/K - a*y)", "y*(1 - y - b*x)"],
                                         {"K": ["1.5", "1.7"], "a": "1/2", "b": "1/2"},
                                         region={"x": ["-0.5", "3"], "y": ["-0.5", "2"]})),
]


def _neg(x: str) -> str:
    return x[1:] if x.startswith("-") else ("-" + x if x != "0" else x)


def tampered(valid: dict[str, dict]) -> list[tuple[str, object, str, str]]:
    """Return (name, content, code, why) for each file of the invalid corpus."""
    out = []
    saddle = valid["chemostat-2"]

    def edit(name, base, change, code, why):
        doc = copy.deepcopy(base)
        change(doc)
        out.append((name, doc, code, why))

    def shrink(doc):
        lo, hi = (Fraction(v) for v in doc["pieces"][0]["box"][0])
        c = Fraction(doc["pieces"][0]["centre"][0])
        doc["pieces"][0]["box"][0] = [str(c - (c - lo) / 1000), str(c + (hi - c) / 1000)]

    edit("box-shrunk", saddle, shrink, "krawczyk", "a box far inside its Krawczyk image")
    edit("claim-sink", saddle, lambda d: d["claim"].update(stable_dimension=2,
                                                           unstable_dimension=0),
         "not-definite", "a saddle claimed to be a sink")
    edit("inertia-factor-swapped", saddle, lambda d: d["pieces"][0].update(inertia_factor=[
        row[::-1] for row in d["pieces"][0]["inertia_factor"]]),
        "not-definite", "the columns of the inertia factor swapped (S negated)")
    edit("inertia-factor-zero", saddle, lambda d: d["pieces"][0].update(inertia_factor=[
        ["0", "0"], ["0", "0"]]), "not-definite", "an inertia factor of zeros (S = 0)")
    edit("centre-outside", saddle, lambda d: d["pieces"][0]["centre"].__setitem__(0, "100"),
         "krawczyk", "the centre outside the box")
    edit("parameter-widened", saddle, lambda d: d["model"]["parameters"].__setitem__(
        "a", ["3", "16/5"]), "tiling", "the parameter box widened without new pieces")
    edit("equation-edited", saddle, lambda d: d["model"]["equations"].__setitem__(
        "u", "a / (1 + v**n) - k*u + 1"), "krawczyk", "an equation changed")
    edit("equation-import", saddle, lambda d: d["model"]["equations"].__setitem__(
        "u", "__import__('os').system('true')"), "model", "an import in an equation")
    edit("equation-tower", saddle, lambda d: d["model"]["equations"].__setitem__(
        "u", "10**10**10"), "model", "a power tower in an equation")
    edit("version-3", saddle, lambda d: d.__setitem__("version", 3), "version", "unknown version")
    edit("version-1", saddle, lambda d: d.__setitem__("version", 1), "version",
         "a version-1 certificate (inertia from an exact matrix, no longer read)")
    edit("no-version", saddle, lambda d: d.pop("version"), "malformed", "version missing")
    edit("number-as-float", saddle, lambda d: d["pieces"][0]["centre"].__setitem__(0, 1.25),
         "malformed", "a binary float where an exact number belongs")
    edit("box-short", saddle, lambda d: d["pieces"][0].__setitem__(
        "box", d["pieces"][0]["box"][:1]), "malformed", "a box with one side missing")
    edit("unknown-key", saddle, lambda d: d.__setitem__("trust_me", True), "malformed",
         "an unknown key")
    edit("dimension-absurd", saddle, lambda d: d["model"].__setitem__(
        "variables", [f"x{i}" for i in range(1000)]), "malformed", "1000 variables")
    box_cert = valid["lorenz-c-plus-rho20-24-box-1"]
    assert len(box_cert["pieces"]) > 1, "the piece-removal case needs several pieces"
    edit("piece-removed", box_cert, lambda d: d["pieces"].pop(), "tiling",
         "one piece of the parameter cover removed")
    edit("piece-duplicated", box_cert, lambda d: d["pieces"].append(d["pieces"][0]), "tiling",
         "one piece listed twice")
    branch = valid["lorenz-c-plus-rho27-29-branch-1"]
    edit("branch-sensitivity-reversed", branch, lambda d: d["pieces"][0].__setitem__(
        "sensitivity", [[_neg(v) for v in row] for row in d["pieces"][0]["sensitivity"]]),
        "krawczyk", "the first-order branch running the wrong way")
    edit("branch-slopes-without-sensitivity", branch, lambda d: d["pieces"][0].pop(
        "sensitivity"), "malformed", "preconditioner slopes on a plain piece")
    edit("branch-slopes-inflated", branch, lambda d: d["pieces"][0].__setitem__(
        "preconditioner_slopes", [[[v if v == "0" else f"{v}e3" if "/" not in v else
                                    f"{int(v.split('/')[0]) * 1000}/{v.split('/')[1]}"
                                    for v in row] for row in m] for m in
                                  d["pieces"][0]["preconditioner_slopes"]]), "krawczyk",
        "the preconditioner's slopes a thousand times too steep")
    edit("branch-parameter-widened", branch, lambda d: (
        d["model"]["parameters"].__setitem__("rho", ["24", "29"]),
        d["pieces"][0]["parameters"].__setitem__("rho", ["24", "29"])), "krawczyk",
        "the branch claimed across the Hopf value 470/19")
    hopf = valid["brusselator-hopf-1"]
    edit("not-hyperbolic-moved", hopf, lambda d: d["claim"].__setitem__("point", ["1", "201/100"]),
         "not-zero", "the claimed exact equilibrium moved")
    edit("not-hyperbolic-source", hopf, lambda d: (d["model"]["parameters"].__setitem__(
        "b", ["3", "3"]), d["claim"].__setitem__("point", ["1", "3"])), "hyperbolic",
        "b = 3: the exact equilibrium (1, 3) is a source, not on the axis")
    count = valid["circle-hyperbola-count"]

    def drop_leaf(doc):
        node = doc["pieces"][0]["tree"]
        while "split" in node:
            parent, node = node, node["low"]
        parent["low"] = {}

    edit("count-leaf-removed", count, drop_leaf, "malformed", "a leaf of the tree removed")
    edit("count-claim-five", count, lambda d: d["claim"].update(
        count=5, stable_dimensions=d["claim"]["stable_dimensions"] + [0]), "count",
        "one equilibrium too many claimed")

    def shrink_zero(doc):
        z = doc["pieces"][0]["zeros"][0]
        c = [Fraction(v) for v in z["centre"]]
        z["box"] = [[str(ci - Fraction(1, 10**20)), str(ci + Fraction(1, 10**20))] for ci in c]

    edit("count-zero-box-shrunk", count, shrink_zero, "krawczyk",
         "a uniqueness box shrunk below its Krawczyk image")
    edit("count-zero-on-border", count, lambda d: d["region"].__setitem__(
        "x", [d["region"]["x"][0], d["pieces"][0]["zeros"][0]["centre"][0]]), "on-boundary",
        "the region cut through a zero's enclosure")
    # Python's parser reads a lone carriage return as a line break: a checker that sliced number
    # text by column read "3.0" below as "1.0", and so proved a model other than the one shown.
    for name, shown, read, guess, why in [
            ("carriage-return-source", "(1.0*x*2 -\r 3.0*x)", "(1.0*x*2 - 1.0*x)", 0.1,
             "x' = -x (a sink) certified as a source"),
            ("carriage-return-sink", "(1.0 - x +\r 3.0)", "(1.0 - x + 1.0)", 3.0,
             "x' = 4 - x certified with its zero at 2")]:
        base = equilibrium(make_model(["x"], [read], {}), [{"x": guess}], arithmetics=BOTH)
        edit(name, base[0].certificate, lambda d, t=shown: d["model"]["equations"].__setitem__(
            "x", t), "model", why)
    edit("carriage-return-chemostat", valid["chemostat-1"], lambda d: d["model"][
        "equations"].__setitem__("u", "(" + d["model"]["equations"]["u"] + " - 1 +\r      5)"),
        "model", "4 added to an equation behind a carriage return")
    for name, text, why in [("tab", "a / (1 + v**n)\t- k*u", "a tab"),
                            ("line-separator", "a / (1 + v**n) -\u2028k*u", "U+2028"),
                            ("look-alike", "a / (1 + v**n) - k*\uff55", "a fullwidth letter u"),
                            ("comment", "a / (1 + v**n) - k*u # + 1", "a comment")]:
        edit(f"equation-{name}", saddle, lambda d, t=text: d["model"]["equations"].__setitem__(
            "u", t), "model", f"{why} in an equation")
    edit("version-float", saddle, lambda d: d.__setitem__("version", 2.0), "version",
         "the version written as a float")
    edit("version-true", saddle, lambda d: d.__setitem__("version", True), "version",
         "the version written as true")
    edit("number-unicode-digits", saddle, lambda d: d["pieces"][0]["centre"].__setitem__(
        0, "\u0661"), "malformed", "an Arabic-Indic digit in a number")
    # Hostile sizes: each is refused by a bound checked before the work it would cost.
    edit("not-hyperbolic-huge-power", hopf, lambda d: d["model"]["equations"].__setitem__(
        "x", d["model"]["equations"]["x"] + " + 0*((((x**1000)**1000)**1000)**1000)"),
        "budget", "an exact evaluation of 2^(10^12)")
    rotation = ["-x1", "x0"] + [f"-x{i}" for i in range(2, 13)]
    edit("not-hyperbolic-dimension-13", hopf, lambda d: d.update(model=dict(
        d["model"], variables=[f"x{i}" for i in range(13)], parameters={},
        equations={f"x{i}": r for i, r in enumerate(rotation)}),
        claim={"verdict": "not hyperbolic", "point": ["0"] * 13}), "budget",
        "a true claim (eigenvalues +-i) above the dimension of exact proofs")
    edit("precision-sine", valid["transcendental-1"], lambda d: d.__setitem__(
        "precision", 20000), "budget", "20,000 bits for the elementary functions")
    edit("precision-wide", saddle, lambda d: d.__setitem__("precision", 100000), "budget",
         "100,000 bits for two variables")

    edit("huge-rational", saddle, lambda d: d["pieces"][0]["centre"].__setitem__(
        0, "1" * 5000), "malformed", "a number with 5,000 digits")
    edit("equation-nested-1e5", saddle, lambda d: d["model"]["equations"].__setitem__(
        "u", "(" * 10**5 + "u" + ")" * 10**5), "model", "parentheses nested 10^5 deep")
    edit("unknown-note", saddle, lambda d: d.__setitem__("note", "checked by hand"),
         "malformed", "a note, which the format does not have")
    edit("region-on-hyperbolic", saddle, lambda d: d.__setitem__("region", {"junk": 1}),
         "malformed", "a region on a hyperbolic claim")
    edit("pieces-on-not-hyperbolic", hopf, lambda d: d.__setitem__("pieces", [{"junk": 1}]),
         "malformed", "pieces on a not-hyperbolic claim, which has none")
    twice = json.dumps(saddle, indent=1).replace('"claim": {', '"claim": {"verdict": "count", ',
                                                   1)
    out.append(("key-twice", twice, "malformed", "a key written twice in one object"))
    moving = valid["competition-box-count"]
    where = next((i, j) for i, p in enumerate(moving["pieces"]) for j, z in
                 enumerate(p["zeros"]) if "sensitivity" in z)

    def reverse_branch(doc):
        zero = doc["pieces"][where[0]]["zeros"][where[1]]
        zero["sensitivity"] = [[_neg(v) for v in row] for row in zero["sensitivity"]]

    edit("count-branch-reversed", moving, reverse_branch, "krawczyk",
         "a travelling zero's first-order form running the wrong way")

    def hull_for_core(doc):  # the form's box without its travel: leaves outside the core
        zero = doc["pieces"][where[0]]["zeros"][where[1]]
        zero.pop("sensitivity")
        zero.pop("preconditioner_slopes")
        zero.pop("classification", None)

    edit("count-branch-dropped", moving, hull_for_core, "krawczyk",
         "a travelling zero's form dropped: its box alone does not hold the zero for every K")
    out.append(("not-json", "this is not JSON {", "malformed", "not JSON"))
    out.append(("deep-nesting", "[" * 100000 + "]" * 100000, "malformed", "nesting 10^5 deep"))
    out.append(("huge-number", '{"format": "certify-certificate", "version": 2, "precision": 5'
                + "0" * 100000 + "}", "malformed", "a number with 10^5 digits"))
    return out


def main() -> None:
    valid_dir, invalid_dir = HERE / "valid", HERE / "invalid"
    for d in (valid_dir, invalid_dir):
        d.mkdir(exist_ok=True)
        for old in d.glob("*.json"):
            old.unlink()
    valid: dict[str, dict] = {}
    for name, model, guesses, period in CASES:
        results = equilibrium(model, guesses, period=period, arithmetics=BOTH)
        for k, r in enumerate(results, 1):
            if r.certificate is None:
                raise SystemExit(f"{name}-{k}: {r.verdict} ({r.reason}): {r.message}")
            valid[f"{name}-{k}"] = r.certificate
            write_certificate(r.certificate, valid_dir / f"{name}-{k}.cert.json")
    for name, model in COUNTS:
        r = scan(model, arithmetics=BOTH)
        if r.certificate is None:
            raise SystemExit(f"{name}: {r.reason}: {r.message}")
        valid[name] = r.certificate
        write_certificate(r.certificate, valid_dir / f"{name}.cert.json")
    manifest = {}
    for name, content, code, why in tampered(valid):
        path = invalid_dir / f"{name}.cert.json"
        path.write_text(content if isinstance(content, str) else json.dumps(content, indent=1))
        manifest[path.name] = {"code": code, "why": why}
    (invalid_dir / "MANIFEST.json").write_text(json.dumps(manifest, indent=1) + "\n")
    print(f"{len(valid)} valid, {len(manifest)} invalid certificates written")


if __name__ == "__main__":
    main()
