"""The formula grammar: what it reads, what it refuses, and that it never crashes or hangs.

Reference for the round trips: sympy's own ``str()`` printer (the text the recipes
stored before this grammar existed) and exact sympy equality of the rebuilt
expression; floats are compared to the last bit through :func:`to_text`.
"""

from __future__ import annotations

import random
import time

import pytest
import sympy as sp

from flowkit.errors import FlowDefinitionError, FlowkitError
from flowkit.flows import grammar
from flowkit.flows.codegen import T, X, Y, Z
from flowkit.flows.grammar import as_sympy, check_parameter_names, parse_formula, to_text

A, B = sp.symbols("A B", real=True)


@pytest.mark.parametrize("text, expected", [
    ("A*sin(z) + B*cos(y)", A * sp.sin(Z) + B * sp.cos(Y)),
    ("x**2 - 3/2*y", X**2 - sp.Rational(3, 2) * Y),
    ("-x + +y - (-z)", -X + Y + Z),
    ("1e-5*x - 2.5E+3", sp.Float(1e-5) * X - sp.Float(2500.0)),
    ("exp(t)*log(x, 2) + sqrt(2)", sp.exp(T) * sp.log(X, 2) + sp.sqrt(2)),
    ("Abs(x) + abs(y) + fabs(z)", sp.Abs(X) + sp.Abs(Y) + sp.Abs(Z)),
    ("atan2(y, x) + arctan2(y, x)", 2 * sp.atan2(Y, X)),
    ("asin(x) + arccos(y) + arctan(z) + atan(t)", sp.asin(X) + sp.acos(Y) + sp.atan(Z) + sp.atan(T)),
    ("sinh(x)*cosh(y)/tanh(z)", sp.sinh(X) * sp.cosh(Y) / sp.tanh(Z)),
    ("pi*E + e", sp.pi * sp.E + sp.E),
    ("mod(x, 1) + floor(y) + Mod(z, 2)", sp.Mod(X, 1) + sp.floor(Y) + sp.Mod(Z, 2)),
    ("Piecewise((x/A, A > x), (1 - x, True))", sp.Piecewise((X / A, A > X), (1 - X, True))),
    ("Piecewise((1, (x < A) & (y >= 0)), (0, True))", sp.Piecewise((1, (X < A) & (Y >= 0)), (0, True))),
    ("  x\t+ 1", X + 1),
])
def test_reads_formulas_as_sympy_writes_them(text, expected):
    assert parse_formula(text, ["A", "B"]) == expected


@pytest.mark.parametrize("text, piece, words", [
    ("__import__('os').system('touch M')", "__import__('os').system", "named functions"),
    ("x.real", "x.real", "attribute"),
    ("foo(x)", "foo", "unknown function"),
    ("sin(q*x)", "q", "unknown symbol"),
    ("x^2", "x^2", "use ** for powers"),
    ("sin(x, y)", "sin(x, y)", "takes 1"),
    ("lambda: 1", "lambda: 1", "not part of the formula grammar"),
    ("[x, y]", "[x, y]", "not part of the formula grammar"),
    ("x < 1", "x < 1", "only allowed inside Piecewise"),
    ("'text'", "'text'", "str literal"),
    ("1j*x", "1j", "complex"),
    ("1/0", "0", "division by zero"),
    ("log(0)", "log(0)", "undefined"),
    ("sin(x", "(", "never closed"),
    ("x + * y", "*", "invalid syntax"),
    ("9**9**9", "9**9**9", "digits"),
    ("x**(10**9)", "x**(10**9)", "larger than"),
    ("((x + 1)**8)**8", "((x + 1)**8)**8", "larger than"),
    ("1e999*x", "1e999", "double precision"),
    ("sin(x, key=1)", "1", "keyword"),
])
def test_refusals_point_at_the_piece(text, piece, words):
    with pytest.raises(FlowDefinitionError) as info:
        parse_formula(text, ["A"], label="velocity component 0")
    msg = str(info.value)
    assert msg.startswith("velocity component 0:")
    assert words in msg
    first, line, carets = msg.splitlines()[-3:]
    col = carets.index("^")
    assert line.strip() == text.strip()
    assert line[col:col + len(piece)] == piece, (line, carets)
    assert f"column {col - 3}" in first


def test_non_ascii_and_empty_and_oversized():
    for text, words in (("x + é", "column 5"), ("", "empty"), ("x" * (grammar.MAX_LENGTH + 1), "characters")):
        with pytest.raises(FlowDefinitionError, match=words):
            parse_formula(text)
    with pytest.raises(FlowDefinitionError, match="must be text"):
        parse_formula(3.0)


def test_hostile_formulas_end_quickly():
    # each of these would hang sympy or blow the parser's stack if it were simply handed over
    hostile = ["9**9**9", "10**10**10", "2**(10**9/3)", "x**(10**9)", "(" * 300 + "x" + ")" * 300,
               "-" * 5000 + "x", "*".join(["(x + y)"] * 400), "sqrt(" * 100 + "x" + ")" * 100]
    for text in hostile:
        t0 = time.perf_counter()
        with pytest.raises(FlowkitError):
            parse_formula(text)
        assert time.perf_counter() - t0 < 2.0, text


def test_long_sums_are_read_term_by_term():
    # Python's parser nests a sum of n terms n levels deep; sympy prints polynomials of hundreds of terms
    n = 2000
    text = "+".join(f"{i}*x**{i % 5}" for i in range(1, n + 1))
    assert len(text) < grammar.MAX_LENGTH
    expected = sum(sp.Integer(i) * X ** (i % 5) for i in range(1, n + 1))
    assert sp.expand(parse_formula(text) - expected) == 0


def test_coordinates_can_be_restricted():
    with pytest.raises(FlowDefinitionError, match="unknown symbol .t."):
        parse_formula("x + t", coordinates=("x", "y", "z"))


def test_parameter_names():
    assert check_parameter_names(["p", "rotation", "P1_0"]) == ["p", "rotation", "P1_0"]
    for bad in ("x", "t", "_params", "sin", "pi", "E", "lambda", "math", "a b", "1a", "é"):
        with pytest.raises(FlowDefinitionError, match="parameter name"):
            check_parameter_names([bad])


def test_as_sympy_refuses_text():
    assert as_sympy(2) == sp.Integer(2) and as_sympy(0.25) == sp.Float(0.25) and as_sympy(X) is X
    for bad in ("x + 1", "__import__('os')", True, object(), float("nan")):
        with pytest.raises(FlowDefinitionError):
            as_sympy(bad)


def _presets_exprs():
    from flowkit.flows import registry

    out = []
    for name in registry.preset_names(maps=True):
        fam = registry.family(name)
        for part in (getattr(fam, "forward", fam), getattr(fam, "inverse", None)):
            if part is not None and part.exprs:
                out.append((f"{name}:{part.name}", part.exprs, part.param_names))
    return out


def test_every_preset_formula_round_trips():
    """str() of every preset's expressions (what recipes and `describe` show) reads back exactly."""
    cases = _presets_exprs()
    assert len(cases) >= 10
    for label, exprs, params in cases:
        for e in exprs:
            assert parse_formula(str(e), params, label=label) == e, (label, str(e))
            assert parse_formula(to_text(e), params, label=label) == e, (label, to_text(e))


def test_lamb_and_surface_flow_formulas_round_trip():
    from flowkit.flows.sphere import lamb_expressions

    syms = {lab: sp.Symbol(lab, real=True) for lab in ("P1_0", "T1_0", "P2_c1", "T2_s2", "P3_0", "T3_c2")}
    for e in lamb_expressions(syms):
        assert parse_formula(str(e), list(syms)) == e
    numeric = lamb_expressions({"P2_0": 0.3, "T1_c1": -1.25, "P3_s1": 1 / 3})
    for e in numeric:
        back = parse_formula(to_text(e))
        assert back == e  # floats carry all 17 digits through to_text


def test_floats_round_trip_exactly_through_to_text():
    rng = random.Random(4)
    for _ in range(200):
        c = rng.uniform(-1e3, 1e3) * 10 ** rng.randint(-12, 12)
        e = sp.Float(c) * X + sp.Float(rng.random()) * sp.sin(Y) ** 2
        assert parse_formula(to_text(e)) == e


# -- property test: random token soups never crash the grammar ------------------------------
_TOKENS = ["x", "y", "z", "t", "A", "pi", "e", "E", "1", "2", "0", "9", "1.5", "1e308", "1e-3", "+", "-", "*",
           "/", "**", "(", ")", ",", "sin", "cos", "exp", "log", "sqrt", "Abs", "atan2", "mod", "Piecewise",
           "<", ">", "<=", "&", "|", "~", "True", "^", "%", "//", ".", "[", "]", "{", "}", "'", '"', "lambda",
           ":", "=", "==", "__import__", "os", "system", "import", "if", "else", "for", "in", "@", "j", "1j",
           "nan", "oo", "zoo", "I", "not", "and", " ", "\t", "#", "\\", ";"]


def _soup(rng: random.Random) -> str:
    n = rng.randint(1, 25)
    return "".join(rng.choice(_TOKENS) + (" " if rng.random() < 0.3 else "") for _ in range(n))


def _structured(rng: random.Random, depth: int = 0) -> str:
    """A random grammatical formula, often with hostile numbers, to reach the deeper checks."""
    if depth > 4 or rng.random() < 0.3:
        return rng.choice(["x", "y", "A", "2", "9", "0", "1.5", "pi", "-1", "1e300"])
    kind = rng.random()
    if kind < 0.5:
        return f"({_structured(rng, depth + 1)}){rng.choice(['+', '-', '*', '/', '**'])}({_structured(rng, depth + 1)})"
    f = rng.choice(["sin", "exp", "log", "sqrt", "atan2", "mod", "floor", "Abs", "max"])
    nargs = {"atan2": 2, "mod": 2, "max": 2}.get(f, 1)
    return f"{f}({', '.join(_structured(rng, depth + 1) for _ in range(nargs))})"


def test_random_token_soups_never_crash():
    rng = random.Random(20261202)
    ok = refused = 0
    t0 = time.perf_counter()
    for i in range(2500):
        text = _soup(rng) if i % 2 else _structured(rng)
        try:
            out = parse_formula(text, ["A"])
        except FlowkitError:
            refused += 1
            continue
        assert isinstance(out, sp.Basic)
        assert out.free_symbols <= {X, Y, Z, T, A}
        ok += 1
    assert ok > 200 and refused > 200  # both branches really exercised
    assert time.perf_counter() - t0 < 30
