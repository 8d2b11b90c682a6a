"""Model files: exact decimals, one clean line for each kind of bad input (README: Model files)."""

from __future__ import annotations

import time
from fractions import Fraction

import pytest

from certify import InputError, load_model, make_model, model_from_text
from certify.check.ad import evaluate
from certify.check.arith import ArbArithmetic

from .conftest import EXAMPLES, run_cli

GOOD = """
name = "test"
kind = "flow"
variables = ["u", "v"]
[parameters]
a = "0.1"
b = 0.1
c = "1/10"
d = "1e-9"
k = ["0.95", "1.05"]
[equations]
u = "a - u + b*v"
v = "c*u - d*v + k"
[[guesses]]
u = 1
v = 2
[region]
u = ["0", "4"]
v = [0, 4]
"""


def test_decimals_are_exact():
    m = model_from_text(GOOD)
    tenth = (Fraction(1, 10), Fraction(1, 10))
    assert m.parameters["a"] == m.parameters["b"] == m.parameters["c"] == tenth
    assert m.parameters["d"] == (Fraction(1, 10**9),) * 2
    assert m.parameters["k"] == (Fraction(95, 100), Fraction(105, 100))
    assert m.region["v"] == (0, 4)
    assert m.guesses == ({"u": 1.0, "v": 2.0},)


def test_parameter_enclosure_contains_one_tenth_exactly():
    ar = ArbArithmetic(53)
    m = model_from_text(GOOD)
    with ar.active():
        lo, hi = ar.bounds(ar.interval(*m.parameters["b"]))
    assert lo <= Fraction(1, 10) <= hi and lo < hi  # 1/10 is not a dyadic: a true interval


def test_python_constructor_matches_file():
    m = make_model(["u", "v"], {"u": "a - u + b*v", "v": "c*u - d*v + k"},
                   {"a": "0.1", "b": "1/10", "c": "0.1", "d": "1e-9", "k": ["0.95", "1.05"]})
    f = model_from_text(GOOD)
    assert m.parameters == f.parameters and m.trees == f.trees
    with pytest.raises(InputError):
        make_model(["u"], ["u**2"], {"a": 0.1})  # a binary float is refused


def test_evaluation_over_box_contains_exact_values():
    m = model_from_text(GOOD)
    ar = ArbArithmetic(80)
    with ar.active():
        vals, jac = evaluate(m.tape, ar, [ar.const(Fraction(1)), ar.const(Fraction(2))],
                             [ar.interval(*m.parameters[p]) for p in m.parameters])
        lo, hi = ar.bounds(vals[0])
        assert lo <= Fraction(1, 10) - 1 + Fraction(2, 10) <= hi
        assert ar.bounds(jac[1][1])[0] <= -Fraction(1, 10**9) <= ar.bounds(jac[1][1])[1]


BAD = {
    "malformed TOML": ("variables = [\"u\"\n[equations]\n", "not valid TOML", None),
    "missing equation": ('variables = ["u", "v"]\n[equations]\nu = "v"\n',
                         "missing equation for variable 'v'", None),
    "extra equation": ('variables = ["u"]\n[equations]\nu = "u"\nw = "u"\n',
                       "not a variable", 4),
    "undeclared name": ('variables = ["u"]\n[equations]\nu = "q*u"\n', "undeclared name 'q'", 3),
    "variable and parameter": ('variables = ["u"]\n[parameters]\nu = 1\n[equations]\nu = "u"\n',
                               "both a variable and a parameter", 3),
    "caret": ('variables = ["u"]\n[equations]\nu = "u^2"\n', "use ** for powers", 3),
    "import": ('variables = ["u"]\n[equations]\nu = "__import__(\'os\')"\n', "not allowed", 3),
    "attribute": ('variables = ["u"]\n[equations]\nu = "u.real"\n', "attribute access", 3),
    "subscript": ('variables = ["u"]\n[equations]\nu = "u[0]"\n', "subscripts", 3),
    "lambda": ('variables = ["u"]\n[equations]\nu = "(lambda: u)()"\n', "not allowed", 3),
    "empty interval": ('variables = ["u"]\n[parameters]\nk = [2, 1]\n[equations]\nu = "k"\n',
                       "empty interval", 3),
    "inf": ('variables = ["u"]\n[parameters]\nk = inf\n[equations]\nu = "k"\n',
            "not an exact finite number", 3),
    "nan": ('variables = ["u"]\n[parameters]\nk = nan\n[equations]\nu = "k"\n',
            "not an exact finite number", 3),
    "too many digits": ('variables = ["u"]\n[parameters]\nk = "' + "7" * 80 +
                        '"\n[equations]\nu = "k"\n', "at most 60 digits", 3),
    "power tower": ('variables = ["u"]\n[equations]\nu = "10**10**10"\n',
                    "may not itself contain **", 3),
    "deep nesting": ('variables = ["u"]\n[equations]\nu = "' + "(" * 400 + "u" + ")" * 400 +
                     '"\n', "nest", 3),
    "unknown key": ('variables = ["u"]\nspeed = 3\n[equations]\nu = "u"\n', "unknown key", 2),
    "carriage return": ('variables = ["x"]\n[equations]\nx = "(1.0*x*2 -\\r 3.0*x)"\n',
                        "only printable ASCII", 3),
    "tab": ('variables = ["x"]\n[equations]\nx = "x\\t- 1"\n', "only printable ASCII", 3),
    "look-alike letter": ('variables = ["s"]\n[equations]\ns = "1 - \u017f"\n',
                          "only printable ASCII", 3),
    "comment": ('variables = ["x"]\n[equations]\nx = "1 - x # + 3"\n', "comments", 3),
    "unicode digit": ('variables = ["x"]\n[parameters]\nk = "\u0661"\n[equations]\nx = "k"\n',
                      "only printable ASCII", 3),
    "bad kind": ('kind = "ode"\nvariables = ["u"]\n[equations]\nu = "u"\n', "kind must be", 1),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_model_gets_one_clean_line(case, write):
    text, fragment, line = BAD[case]
    path = write("bad.toml", text)
    start = time.perf_counter()
    proc = run_cli("inspect", path)
    assert time.perf_counter() - start < 10  # includes interpreter start-up
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and fragment in lines[0]
    assert str(path) in lines[0]
    if line:
        assert f"{path}:{line}:" in lines[0]
    with pytest.raises(InputError):
        load_model(path)


def test_every_example_loads():
    from certify.gate import load_claims

    models = [p for p in EXAMPLES.glob("*.toml") if not p.name.endswith("-claims.toml")]
    assert len(models) >= 3
    for p in models:
        m = load_model(p)
        assert m.guesses and m.region
    for p in EXAMPLES.glob("*-claims.toml"):  # claims files name a model beside them
        assert load_claims(p).claims


def test_set_overrides_and_rejects_unknown():
    proc = run_cli("inspect", EXAMPLES / "chemostat.toml", "--set", "a=3.1..3.3", "--json")
    assert proc.returncode == 0
    import json
    data = json.loads(proc.stdout)
    assert data["parameters"]["a"] == ["31/10", "33/10"]
    assert data["jacobian"][0][0] == "-k"
    proc = run_cli("inspect", EXAMPLES / "chemostat.toml", "--set", "zz=1")
    assert proc.returncode == 2 and "no parameter named 'zz'" in proc.stderr
    proc = run_cli("inspect", EXAMPLES / "chemostat.toml", "--set", "a=3..2")
    assert proc.returncode == 2 and "empty interval" in proc.stderr
