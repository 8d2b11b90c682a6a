"""Mutation property test: edited certificates are rejected, or still prove what they claim.

Each mutant of a valid certificate (a number nudged by the smallest step of its notation, a
matrix entry replaced, a parameter box widened, an equation edited, a field dropped, duplicated
or retyped, variables swapped, the claim changed) is given to the checker. When the checker
accepts it, the claim is re-derived independently with mpmath at 40 digits: a zero of the
(possibly edited) model near the centre of each piece, inside its box, with as many stable
directions as claimed; for a "not hyperbolic" claim, an exact zero whose characteristic
polynomial (sympy) has a root on the imaginary axis or the unit circle.
"""

from __future__ import annotations

import copy
import json
from fractions import Fraction as F
from pathlib import Path

import mpmath
import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from certify.check import CertificateRejected, check
from certify.check.expr import parse_expression
from certify.model.symbolic import to_sympy

CORPUS = sorted((Path(__file__).resolve().parent.parent / "proofs" / "valid").glob("*.cert.json"))
BASES = [json.loads(p.read_text()) for p in CORPUS]
COUNT_BASES = [b for b in BASES if b["claim"]["verdict"] == "count"
               and b["model"]["equations"] == {"x": "x**2 + y**2 - 4", "y": "x*y - 1"}]
BASES = [b for b in BASES if b["claim"]["verdict"] != "count"]
COUNTS = {"tried": 0, "rejected": 0, "accepted": 0}
KINDS = ["nudge", "replace", "widen", "equation", "drop", "duplicate", "retype", "swap", "claim"]
REJECTED_BY_KIND = dict.fromkeys(KINDS, 0)
MUTANTS = 1200


def _step(text: str, up: bool) -> str:
    """Return the number with its last digit (numerator) moved by one."""
    num, _, den = text.partition("/")
    num = str(int(num) + (1 if up else -1))
    return f"{num}/{den}" if den else num


def _numbers(doc) -> list[tuple[list, object]]:
    """Return (container, key) for every exact number in the pieces and the claim point."""
    spots = []

    def walk(node):
        if isinstance(node, list):
            for i, v in enumerate(node):
                if isinstance(v, str):
                    spots.append((node, i))
                else:
                    walk(v)
        elif isinstance(node, dict):
            for v in node.values():
                walk(v)

    walk(doc.get("pieces", []))
    walk(doc["model"]["parameters"])
    if "point" in doc["claim"]:
        walk(doc["claim"]["point"])
    return spots


@st.composite
def mutants(draw):
    doc = copy.deepcopy(draw(st.sampled_from(BASES)))
    kind = draw(st.sampled_from(["nudge", "nudge", *KINDS]))
    spots = _numbers(doc)
    if kind == "nudge" and spots:
        box, key = draw(st.sampled_from(spots))
        box[key] = _step(box[key], draw(st.booleans()))
    elif kind == "replace" and spots:
        box, key = draw(st.sampled_from(spots))
        q = draw(st.fractions(min_value=-50, max_value=50, max_denominator=64))
        box[key] = f"{q.numerator}/{q.denominator}"
    elif kind == "widen" and doc["model"]["parameters"]:
        name = draw(st.sampled_from(sorted(doc["model"]["parameters"])))
        lo, hi = doc["model"]["parameters"][name]
        delta = draw(st.sampled_from([F(1, 10**6), F(1, 100), F(1)]))
        doc["model"]["parameters"][name] = [str(F(lo) - delta), hi]
    elif kind == "equation":
        var = draw(st.sampled_from(sorted(doc["model"]["equations"])))
        edit = draw(st.sampled_from([" + 1/1000", " - 1/10**6", "*(1 + 1/100)", " + 0*x"]))
        doc["model"]["equations"][var] = f"({doc['model']['equations'][var]}){edit}"
    elif kind == "drop":
        target = draw(st.sampled_from([doc, doc["model"], doc["claim"]] + doc.get("pieces", [])))
        if target:
            target.pop(draw(st.sampled_from(sorted(target))))
    elif kind == "duplicate" and doc.get("pieces"):
        doc["pieces"].append(copy.deepcopy(draw(st.sampled_from(doc["pieces"]))))
    elif kind == "retype" and spots:
        box, key = draw(st.sampled_from(spots))
        box[key] = draw(st.sampled_from([float(F(box[key])), [box[key]], None, True]))
    elif kind == "swap" and len(doc["model"]["variables"]) > 1:
        v = doc["model"]["variables"]
        v[0], v[1] = v[1], v[0]
    elif kind == "claim":
        c = doc["claim"]
        if c["verdict"] == "hyperbolic":
            shift = draw(st.sampled_from([-1, 1]))
            c["stable_dimension"] += shift
            c["unstable_dimension"] -= shift
        else:
            doc["claim"] = {"verdict": "hyperbolic", "stable_dimension": 0,
                            "unstable_dimension": len(doc["model"]["variables"])}
    return kind, doc


def _system(doc):
    """Return (variables, sympy right-hand sides, kind, period) of a certificate's model."""
    model = doc["model"]
    names = frozenset(model["variables"]) | frozenset(model["parameters"])
    syms = {n: sp.Symbol(n, real=True) for n in names}
    rhs = [to_sympy(parse_expression(model["equations"][v], names), syms)
           for v in model["variables"]]
    return [syms[v] for v in model["variables"]], rhs, syms, model["kind"], doc.get("period", 1)


def _rederive_hyperbolic(doc, verified):
    xs, rhs, syms, kind, period = _system(doc)
    mpmath.mp.dps = 40
    for piece in doc["pieces"]:
        subs = {syms[p]: sp.Rational((F(lo) + F(hi)) / 2)
                for p, (lo, hi) in piece["parameters"].items()}
        g = [r.subs(subs) for r in rhs]
        for _ in range(period - 1):
            g = [r.subs(subs).subs(dict(zip(xs, g)), simultaneous=True) for r in rhs]
        f = [gi - (x if kind == "map" else 0) for gi, x in zip(g, xs)]
        fn = sp.lambdify(xs, f, "mpmath")
        jac = sp.lambdify(xs, sp.Matrix(g).jacobian(xs), "mpmath")
        start = [mpmath.mpf(F(c).numerator) / F(c).denominator for c in piece["centre"]]
        root = mpmath.findroot(lambda *x: fn(*x), start, tol=1e-30)
        root = ([root[i] for i in range(len(xs))] if isinstance(root, mpmath.matrix)
                else [root])
        for r, (lo, hi) in zip(root, piece["box"]):
            assert mpmath.mpf(F(lo).numerator) / F(lo).denominator - 1e-25 <= r
            assert r <= mpmath.mpf(F(hi).numerator) / F(hi).denominator + 1e-25
        ev = mpmath.eig(mpmath.matrix(jac(*root)))[0]
        if kind == "flow":
            assert all(abs(mpmath.re(e)) > 1e-20 for e in ev)
            stable = sum(1 for e in ev if mpmath.re(e) < 0)
        else:
            assert all(abs(abs(e) - 1) > 1e-20 for e in ev)
            stable = sum(1 for e in ev if abs(e) < 1)
        assert stable == verified.claim["stable_dimension"]


def _rederive_not_hyperbolic(doc):
    xs, rhs, syms, kind, period = _system(doc)
    subs = {syms[p]: sp.Rational(F(lo)) for p, (lo, hi) in doc["model"]["parameters"].items()}
    point = {x: sp.Rational(F(v)) for x, v in zip(xs, doc["claim"]["point"])}
    g = [r.subs(subs) for r in rhs]
    for _ in range(period - 1):
        g = [r.subs(subs).subs(dict(zip(xs, g)), simultaneous=True) for r in rhs]
    values = [gi.subs(point) - (point[x] if kind == "map" else 0) for gi, x in zip(g, xs)]
    assert all(sp.simplify(v) == 0 for v in values)
    t = sp.Symbol("t")
    poly = sp.Poly(sp.Matrix(g).jacobian(xs).subs(point).charpoly(t).as_expr(), t)
    roots = poly.nroots(n=50)
    gap = [abs(sp.re(r)) if kind == "flow" else abs(abs(r) - 1) for r in roots]
    assert min(gap) < 1e-40


def _counted_check(doc):
    """Return what the checker accepts of the mutant (None when rejected), counting both."""
    COUNTS["tried"] += 1
    try:
        verified = check(doc, "flint")
    except CertificateRejected:
        COUNTS["rejected"] += 1
        return None
    COUNTS["accepted"] += 1
    return verified


@settings(max_examples=MUTANTS, deadline=None, suppress_health_check=list(HealthCheck))
@given(mutants())
def test_mutants_are_rejected_or_still_prove_their_claim(mutant):
    kind, doc = mutant
    verified = _counted_check(doc)
    if verified is None:
        REJECTED_BY_KIND[kind] += 1
        return
    if verified.claim["verdict"] == "hyperbolic":
        _rederive_hyperbolic(doc, verified)
    else:
        _rederive_not_hyperbolic(doc)


def _all_strings(node, out):
    if isinstance(node, list):
        for i, v in enumerate(node):
            (out.append((node, i)) if isinstance(v, str) else _all_strings(v, out))
    elif isinstance(node, dict):
        for k, v in node.items():
            if isinstance(v, str) and k == "at":
                out.append((node, k))
            elif not isinstance(v, str):
                _all_strings(v, out)
    return out


@st.composite
def count_mutants(draw):
    doc = copy.deepcopy(draw(st.sampled_from(COUNT_BASES)))
    spots = _all_strings(doc["pieces"], []) + _all_strings(doc["region"], [])
    for _ in range(draw(st.integers(1, 3))):
        box, key = draw(st.sampled_from(spots))
        if draw(st.booleans()):
            box[key] = _step(box[key], draw(st.booleans()))
        else:
            q = draw(st.fractions(min_value=-4, max_value=4, max_denominator=16))
            box[key] = f"{q.numerator}/{q.denominator}"
    return doc


@settings(max_examples=300, deadline=None, suppress_health_check=list(HealthCheck))
@given(count_mutants())
def test_count_mutants_are_rejected_or_count_correctly(doc):
    """Accepted count mutants must state the number of real solutions in the region (sympy)."""
    verified = _counted_check(doc)
    if verified is None:
        return
    x, y = sp.symbols("x y", real=True)
    region = {v: (F(lo), F(hi)) for v, (lo, hi) in doc["region"].items()}
    solutions = sp.solve([x**2 + y**2 - 4, x * y - 1], [x, y], dict=True)
    inside = [s for s in solutions
              if region["x"][0] <= s[x] <= region["x"][1]
              and region["y"][0] <= s[y] <= region["y"][1]]
    assert verified.claim["count"] == len(inside)


def test_mutation_count():
    if COUNTS["tried"] == 0:
        return  # the property test was deselected
    print(f"\nmutants tried: {COUNTS['tried']}, rejected: {COUNTS['rejected']}, "
          f"accepted and re-derived: {COUNTS['accepted']}")
    assert COUNTS["tried"] >= 1000
    assert COUNTS["rejected"] >= COUNTS["tried"] // 3
    if sum(REJECTED_BY_KIND.values()):  # the single-certificate mutants ran
        assert all(REJECTED_BY_KIND.values()), REJECTED_BY_KIND


# Characters Python's parser reads as line breaks or folds to other letters (NFKC), and comments:
# a checker that accepted them could prove a model other than the text shows.
HIDDEN = ["\r", "\t", "\f", "\v", "\u2028", "\u2029", "\x85", "\x00", " # ", "#"]
TEXT_KINDS = {"insert": 0, "look-alike": 0}


def _look_alike(ch: str) -> str:
    """Return a character that NFKC folds to the ASCII letter or digit ch."""
    if ch == "s":
        return "\u017f"  # long s
    return chr(ord(ch) - 0x21 + 0xFF01)  # the fullwidth form


@st.composite
def text_mutants(draw):
    doc = copy.deepcopy(draw(st.sampled_from(BASES)))
    var = draw(st.sampled_from(sorted(doc["model"]["equations"])))
    text = doc["model"]["equations"][var]
    alnum = [i for i, ch in enumerate(text) if ch.isascii() and ch.isalnum()]
    if draw(st.booleans()) or not alnum:
        at = draw(st.integers(0, len(text)))
        text = text[:at] + draw(st.sampled_from(HIDDEN)) + text[at:]
        kind = "insert"
    else:
        at = draw(st.sampled_from(alnum))
        text = text[:at] + _look_alike(text[at]) + text[at + 1:]
        kind = "look-alike"
    doc["model"]["equations"][var] = text
    return kind, doc


@settings(max_examples=300, deadline=None, suppress_health_check=list(HealthCheck))
@given(text_mutants())
def test_hidden_line_breaks_look_alikes_and_comments_are_always_rejected(mutant):
    kind, doc = mutant
    for arithmetic in ("flint", "python"):
        try:
            check(doc, arithmetic)
        except CertificateRejected as exc:
            assert exc.code == "model", exc
        else:
            raise AssertionError(f"accepted {doc['model']['equations']!r}")
    TEXT_KINDS[kind] += 1


def test_every_text_mutant_kind_was_tried():
    if sum(TEXT_KINDS.values()) == 0:
        return  # the property test was deselected
    assert all(n >= 50 for n in TEXT_KINDS.values()), TEXT_KINDS


def _objects(node, path="certificate"):
    """Yield (kind, object) for every JSON object, the kind being its path without indices."""
    if isinstance(node, dict):
        yield path, node
        for k, v in node.items():
            yield from _objects(v, path if path.endswith(("tree", "low", "high")) and k in
                                ("low", "high") else f"{path}.{k}")
    elif isinstance(node, list):
        for v in node:
            yield from _objects(v, path)


def _kind(path: str) -> str:
    return path.replace(".low", "").replace(".high", "")


def _dumps_with_duplicate(doc, target) -> str:
    """Return the JSON text of doc with the first key of the object target written twice."""
    def encode(node):
        if isinstance(node, dict):
            items = [f"{json.dumps(k)}: {encode(v)}" for k, v in node.items()]
            if node is target and items:
                items.append(items[0])
            return "{" + ", ".join(items) + "}"
        if isinstance(node, list):
            return "[" + ", ".join(encode(v) for v in node) + "]"
        return json.dumps(node)
    return encode(doc)


def test_an_unknown_or_repeated_key_in_any_object_is_rejected():
    from certify.check import load

    every = [json.loads(p.read_text()) for p in CORPUS]
    kinds: dict[str, int] = {}
    for base in every:
        tried: dict[str, int] = {}
        for path, obj in _objects(base):
            kind = _kind(path)
            if not obj or tried.get(kind, 0) >= 3:  # three objects of each kind per file
                continue
            tried[kind] = tried.get(kind, 0) + 1
            for mutate in ("unknown", "repeated"):
                doc = copy.deepcopy(base)
                twin = next(o for p, o in _objects(doc) if p == path and o == obj)
                if mutate == "unknown":
                    twin["junk"] = 1
                    text = json.dumps(doc)
                else:
                    text = _dumps_with_duplicate(doc, twin)
                try:
                    check(load(text))
                except CertificateRejected as exc:
                    assert exc.code in ("malformed", "model"), (path, mutate, exc)
                else:
                    raise AssertionError(f"accepted a {mutate} key in {path}")
                kinds[kind] = kinds.get(kind, 0) + 1
    expected = {"certificate", "certificate.model", "certificate.model.parameters",
                "certificate.model.equations",
                "certificate.claim", "certificate.pieces", "certificate.region",
                "certificate.pieces.parameters", "certificate.pieces.zeros",
                "certificate.pieces.zeros.classification", "certificate.pieces.tree",
                "certificate.pieces.tree.empty"}
    assert expected <= set(kinds), sorted(kinds)
