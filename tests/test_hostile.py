"""Hostile input: every case ends in our own error type, fast, and runs nothing.

The tables below are also the catalogue of what the user reads: each row is an
input and a fragment of the message it must produce. Formula rows go through
:func:`parse_formula`; file rows go through :func:`load_bytes`. Each case must
raise :class:`FormulaError` or :class:`ScenarioError` (never another exception)
within one second, a safety bound rather than a benchmark.
"""

from __future__ import annotations

import subprocess
import sys
import time
from collections.abc import Callable
from pathlib import Path
from typing import TypeVar

import pytest
import sympy
from scenario_support import BASE, RATE_LINE, RATE_LINE_NUMBER, varied, with_rate

from sitegen.errors import FormulaError, ScenarioError
from sitegen.scenario.formula import parse_formula
from sitegen.scenario.loader import find_scenarios, load_bytes, load_scenario, load_text

SAFETY_BOUND = 1.0  # seconds per case

SYMBOLS = {
    "B": sympy.Symbol("B", real=True),
    "r": sympy.Symbol("r", positive=True),
    "K": sympy.Symbol("K", positive=True),
    "H": sympy.Symbol("H", positive=True),
}

ALLOWED_FORMS = (
    "formulas allow numbers, declared names, + - * / ^, parentheses and "
    "abs, exp, log, max, min, sqrt, tanh"
)
AUTONOMOUS_HINT = (
    "sitegen analyses autonomous models, where the rate depends only on the state and the "
    "parameters; make a time-varying quantity a parameter"
)


E = TypeVar("E", FormulaError, ScenarioError)


def refused(call: Callable[[], object], error_type: type[E]) -> E:
    """Run ``call``; it must raise exactly ``error_type`` within the safety bound."""
    start = time.perf_counter()
    with pytest.raises(error_type) as info:
        call()
    elapsed = time.perf_counter() - start
    assert type(info.value) is error_type
    assert elapsed < SAFETY_BOUND, f"took {elapsed:.2f} s"
    return info.value


def short_id(value: object) -> str:
    text = repr(value)
    return text if len(text) <= 40 else text[:37] + "..."


# (formula, fragment of the message) -------------------------------------------------
FORMULA_CASES: list[tuple[str, str]] = [
    # code injection and Python machinery
    ("__import__('os').system('echo hi')", "text strings are not allowed in a formula"),
    ("__import__", "the name '__import__' is not allowed in a formula"),
    ("__builtins__", "the name '__builtins__' is not allowed in a formula"),
    ("().__class__.__bases__[0].__subclasses__()", "only the allowed functions may be called"),
    ("B.__class__", "a formula may not contain attribute access (a.b)"),
    ("B.real", "a formula may not contain attribute access (a.b)"),
    ("'{0.__class__}'.format(B)", "text strings are not allowed in a formula"),
    ("f'{B}'", "text strings are not allowed in a formula"),
    ('f"{B}"', "text strings are not allowed in a formula"),
    ("b'B'", "text strings are not allowed in a formula"),
    ("lambda: B", "a formula may not contain lambda functions"),
    ("(lambda: B)()", "only the allowed functions may be called"),
    ("[B for B in (1, 2)]", "a formula may not contain comprehensions"),
    ("{B for x in (1,)}", "a formula may not contain comprehensions"),
    ("(B for x in (1,))", "a formula may not contain comprehensions"),
    ("(x := B)", "a formula may not contain assignments (:=)"),
    ("await B", "a formula may not contain 'await'"),
    ("yield B", "this is not a valid formula (invalid syntax)"),
    ("import os", "this is not a valid formula (invalid syntax)"),
    ("B = 1", "this is not a valid formula (invalid syntax)"),
    ("B; K", "this is not a valid formula (invalid syntax)"),
    ("r*B #- H", "comments ('#') are not allowed in a formula"),
    # exponent towers and huge numbers
    ("9**9**9**9", "the exponent 387420489 is too large (the limit is 100)"),
    ("2^2^2^2^2^2", "the exponent 65536 is too large (the limit is 100)"),
    ("10**10**10", "the exponent 10000000000 is too large (the limit is 100)"),
    ("B**1000", "the exponent 1000 is too large (the limit is 100)"),
    ("B**1e100", "the exponent 1e+100 is too large (the limit is 100)"),
    ("(9**99*9**99*9**99)**2", "this power of numbers is out of range"),
    ("(9**99)*(9**99)*(9**99)*(9**99)", "a number in this formula has more than 300 digits"),
    ("1" * 40, "the number 11111111111111111111... has more than 30 digits"),
    ("9" * 1999, "has more than 30 digits"),
    ("1e999", "the number 1e999 is too large"),
    ("1e-400", "the number 1e-400 is out of range"),
    ("1e-9999999", "the number 1e-9999999 is out of range"),
    ("0x" + "f" * 1990, "is not written in decimal"),
    ("0b101", "the number 0b101 is not written in decimal"),
    # size and nesting
    (
        "(" * 10_000 + "B" + ")" * 10_000,
        "the formula is 20,001 characters long; the limit is 2,000",
    ),
    ("(" * 51 + "B" + ")" * 51, "parentheses are nested more than 50 deep"),
    ("B + " * 25_000 + "B", "the formula is 100,001 characters long; the limit is 2,000"),
    ("-" * 1000 + "B", "the formula is nested more than 50 deep"),
    ("B" + "**B" * 60, "the formula is nested more than 50 deep"),
    ("B" + " + B" * 300, "the formula has more than 500 parts"),
    ("", "the formula is empty"),
    ("   ", "the formula is empty"),
    # bytes and characters
    ("B\x00", "the character '\\x00' is not allowed in a formula"),
    ("r*B*(1 - B/K) - Ｈ", "the character 'Ｈ' is not allowed in a formula"),
    ("é*B", "the character 'é' is not allowed in a formula"),
    ("B\u00a0+ K", "the character '\\xa0' is not allowed in a formula"),
    ("r·B", "the character '·' is not allowed in a formula"),
    # time in an autonomous model
    ("t*B", "the rate may not depend on time ('t')"),
    ("r*B - time", "the rate may not depend on time ('time')"),
    # names and calls
    ("r*B*(1 - B/KK)", "unknown name 'KK'"),
    ("sin(B)", "unknown function 'sin'"),
    ("exec(B)", "unknown function 'exec'"),
    ("eval(B)", "unknown function 'eval'"),
    ("open(B)", "unknown function 'open'"),
    ("getattr(B, K)", "unknown function 'getattr'"),
    ("B()", "'B' is a declared name, not a function"),
    ("exp", "'exp' is a function; call it with parentheses, exp(...)"),
    ("exp()", "exp() takes 1 argument(s), not 0"),
    ("min(B)", "min() takes 2 to 8 argument(s), not 1"),
    ("min(B, key=K)", "keyword arguments are not allowed"),
    ("log(B, base=2)", "keyword arguments are not allowed"),
    ("max(*B)", "starred arguments (*args) are not allowed"),
    ("B[0]", "a formula may not contain subscripts (a[...])"),
    ("B[1:2]", "a formula may not contain subscripts (a[...])"),
    # other syntax
    ("'B'", "text strings are not allowed in a formula"),
    ("B < K", "a formula may not contain comparisons (<, >, ==)"),
    ("B == K", "a formula may not contain comparisons (<, >, ==)"),
    ("B if B > K else K", "a formula may not contain 'if ... else' expressions"),
    ("B and K", "a formula may not contain 'and'/'or'"),
    ("not B", "only + and - may stand before a value"),
    ("~B", "only + and - may stand before a value"),
    ("B % K", "only + - * / and ^ (or **) are allowed as operators"),
    ("B // K", "only + - * / and ^ (or **) are allowed as operators"),
    ("B @ K", "only + - * / and ^ (or **) are allowed as operators"),
    ("B << 2", "only + - * / and ^ (or **) are allowed as operators"),
    ("B, K", "a formula may not contain tuples or commas"),
    ("[B, K]", "a formula may not contain lists"),
    ("{B: K}", "a formula may not contain dictionaries"),
    ("True", "the value True is not a number"),
    ("None", "the value None is not a number"),
    ("...", "the value Ellipsis is not a number"),
    ("1j", "the value 1j is not a number"),
    ("B K", "this is not a valid formula (invalid syntax)"),
    ("2B", "this is not a valid formula (invalid decimal literal)"),
    # undefined values
    ("1/0", "division by zero"),
    ("B/(K - K)", "division by zero"),
    ("0**-1", "zero raised to a negative power"),
    ("log(B, 1)", "the base of log() must be a positive number other than 1"),
    ("log(B, 0)", "the base of log() must be a positive number other than 1"),
    ("log(0)", "the formula is undefined"),
    ("sqrt(-1)*B", "the formula has a value that is not a real number"),
    ("log(-1)", "the formula has a value that is not a real number"),
    ("(-8)^(1/3)", "the formula has a value that is not a real number"),
    ("min(sqrt(-1), B)", "the arguments of min() must be real numbers"),
]


@pytest.mark.parametrize(("formula", "fragment"), FORMULA_CASES, ids=short_id)
def test_formula_is_refused_with_its_message(formula: str, fragment: str) -> None:
    error = refused(lambda: parse_formula(formula, SYMBOLS), FormulaError)
    assert fragment in error.message


@pytest.mark.parametrize(("formula", "fragment"), FORMULA_CASES[:40], ids=short_id)
def test_formula_refused_in_a_file_names_file_and_key(formula: str, fragment: str) -> None:
    error = refused(lambda: load_text(with_rate(formula), "hostile.toml", "hostile"), ScenarioError)
    assert fragment in error.message
    assert error.key == "model.rate"
    assert error.line == RATE_LINE_NUMBER
    assert error.one_line().startswith(f"hostile.toml:{RATE_LINE_NUMBER}: model.rate: ")


def test_every_refusal_has_a_column_inside_the_formula() -> None:
    for formula, _fragment in FORMULA_CASES:
        try:
            parse_formula(formula, SYMBOLS)
        except FormulaError as error:
            if error.column is not None:
                assert 1 <= error.column <= len(formula), formula[:40]
                assert error.width >= 1


# Pinned word for word: the messages people will see most. ----------------------------
def test_time_in_rate_says_the_tool_analyses_autonomous_models() -> None:
    error = refused(lambda: parse_formula("r*B - time", SYMBOLS), FormulaError)
    assert error.message == "the rate may not depend on time ('time')"
    assert error.hint == AUTONOMOUS_HINT
    assert error.column == 7
    assert error.width == 4


def test_undeclared_name_hint_suggests_the_closest_declared_name() -> None:
    error = refused(lambda: parse_formula("r*B*(1 - B/k) - H", SYMBOLS), FormulaError)
    assert error.message == "unknown name 'k'"
    assert error.hint == "did you mean 'K'? Allowed here: B, H, K, pi, r."
    assert error.column == 12


def test_undeclared_name_far_from_all_lists_what_is_declared() -> None:
    error = refused(lambda: parse_formula("B*zzz", SYMBOLS), FormulaError)
    assert error.hint == "allowed here: B, H, K, pi, r."


def test_undeclared_name_in_a_file_renders_line_caret_and_hint() -> None:
    text = with_rate("r*B*(1 - B/Kk) - H")
    error = refused(lambda: load_text(text, "stock.toml", "stock"), ScenarioError)
    assert error.render() == (
        f"stock.toml:{RATE_LINE_NUMBER}: model.rate: unknown name 'Kk'\n"
        '    rate = "r*B*(1 - B/Kk) - H"\n'
        "                       ^^\n"
        "  hint: did you mean 'K'? Allowed here: B, H, K, pi, r."
    )


def test_injection_in_a_file_renders_word_for_word() -> None:
    text = with_rate("__import__('os').system('true')")
    error = refused(lambda: load_text(text, "stock.toml", "stock"), ScenarioError)
    assert error.render() == (
        f"stock.toml:{RATE_LINE_NUMBER}: model.rate: text strings are not allowed in a formula\n"
        "    rate = \"__import__('os').system('true')\"\n"
        "                       ^\n"
        "  hint: a formula uses numbers, declared names and the allowed functions only"
    )


def test_refused_constructs_name_what_is_allowed() -> None:
    error = refused(lambda: parse_formula("[x for x in B]", SYMBOLS), FormulaError)
    assert error.hint == ALLOWED_FORMS
    error = refused(lambda: parse_formula("B if B > K else K", SYMBOLS), FormulaError)
    assert error.hint == "write threshold rules with min() and max(), e.g. min(1, B/Btrig)*F*B"


def test_error_in_a_multiline_formula_points_at_its_own_line() -> None:
    text = varied(RATE_LINE, 'rate = """\nr*B*(1 - B/K)\n  - H*xx"""')
    error = refused(lambda: load_text(text, "stock.toml", "stock"), ScenarioError)
    assert error.line == RATE_LINE_NUMBER + 2
    assert error.render().splitlines()[1:3] == ['      - H*xx"""', "          ^^"]


# Nothing executes: each payload would create the canary if it ran as Python. ---------
def chars(text: str) -> str:
    """``text`` as a quote-free Python expression: chr(..)+chr(..)+..."""
    return "+".join(f"chr({ord(char)})" for char in text)


def payloads(canary: Path) -> list[str]:
    target = chars(str(canary))
    write = chars("w")
    touch = chars(f"touch {canary}")
    opener = chars(f"open({str(canary)!r}, 'w')")
    return [
        f"__import__('os').system('touch {canary}')",
        f"__import__({chars('os')}).system({touch})",
        f"open({target}, {write})",
        f"(lambda: open({target}, {write}))()",
        f"[open({target}, {write}) for x in (1,)]",
        f"(x := open({target}, {write}))",
        f"exec({opener})",
        f"eval({opener})",
        f"getattr(__builtins__, {chars('open')})({target}, {write})",
        f"B if open({target}, {write}) else K",
        f"min(B, open({target}, {write}))",
        f"max(B, *[open({target}, {write})])",
        f"log(B, x=open({target}, {write}))",
        f"sqrt(B)[open({target}, {write})]",
        f'f"{{open({str(canary)!r}, {chr(39)}w{chr(39)})}}"',
    ]


PAYLOAD_COUNT = len(payloads(Path("/x")))


@pytest.mark.parametrize("number", range(PAYLOAD_COUNT))
def test_payload_is_refused_and_never_runs(number: int, tmp_path: Path) -> None:
    canary = tmp_path / "canary"
    payload = payloads(canary)[number]
    refused(lambda: parse_formula(payload, SYMBOLS), FormulaError)
    refused(lambda: load_text(with_rate(payload), "hostile.toml", "hostile"), ScenarioError)
    scenario = tmp_path / "hostile.toml"
    scenario.write_text(with_rate(payload), encoding="utf-8")
    refused(lambda: load_scenario(scenario), ScenarioError)
    assert not canary.exists()


@pytest.mark.parametrize("number", range(PAYLOAD_COUNT))
def test_payload_is_live_when_python_runs_it(number: int, tmp_path: Path) -> None:
    """The control: run as Python, each payload does create its canary."""
    canary = tmp_path / "control"
    payload = payloads(canary)[number]
    program = f"B = K = 1\nlog = sqrt = lambda *a, **k: [0]\nvalue = {payload}\n"
    subprocess.run([sys.executable, "-c", program], capture_output=True, timeout=30)
    assert canary.exists()


# (label, file content, fragment of the message) ---------------------------------------
STATE_TABLE = '[state]\nsymbol = "B"\nname = "biomass"\nunit = "kt"\ncurrent = 640\n'

FILE_CASES: list[tuple[str, bytes, str]] = [
    (
        "non-UTF-8 byte",
        BASE.encode().replace(b"biomass", b"bio\xe9mass"),
        "the file is not valid UTF-8 text (byte 182 cannot be read)",
    ),
    ("UTF-16", BASE.encode("utf-16"), "the file is not valid UTF-8 text (byte 1 cannot be read)"),
    ("over 1 MB", BASE.encode() + b"#" * 1_000_000, "scenario files may be at most 1,000,000"),
    (
        "nested arrays",
        ("x = " + "[" * 100_000 + "]" * 100_000 + "\n" + BASE).encode(),
        "the file nests too deeply to read",
    ),
    (
        "nested inline tables",
        ("x = " + "{a = " * 50_000 + "1" + "}" * 50_000 + "\n" + BASE).encode(),
        "the file nests too deeply to read",
    ),
    ("huge array", ("x = [" + "1, " * 50_000 + "]\n" + BASE).encode(), "unknown key 'x'"),
    (
        "huge inline table",
        ("x = {" + ", ".join(f"k{i} = 1" for i in range(20_000)) + "}\n" + BASE).encode(),
        "unknown key 'x'",
    ),
    (
        "dotted key bomb",
        ("a" + ".a" * 200_000 + " = 1\n" + BASE).encode(),
        "the keys in this file have too many dotted parts to read",
    ),
    (
        "dotted header bomb",
        ("[a" + ".a" * 200_000 + "]\n").encode(),
        "the keys in this file have too many dotted parts to read",
    ),
    (
        "dotted key bomb inside an inline table",
        ("x = {a" + " . a" * 100_000 + " = 1}\n" + BASE).encode(),
        "the keys in this file have too many dotted parts to read",
    ),
    (
        "many keys of 100 parts",
        "".join(f"{'a.' * 100}k{i} = 1\n" for i in range(3000)).encode(),
        "the keys in this file have too many dotted parts to read",
    ),
    (
        "header of 500,000 spaces",
        (BASE + '["a' + " " * 500_000 + 'b"]\nx = 1\n').encode(),
        "unknown key 'a      ",
    ),
    (
        "inline table holding a long text",
        ('x = {a = "' + "b" * 500_000 + '"}\n' + BASE).encode(),
        "unknown key 'x'",
    ),
    (
        "integer of 5,000 digits",
        varied("value = 1000", "value = 1" + "0" * 5000).encode(),
        "a number in this file has too many digits to read",
    ),
    (
        "integer beyond floating point",
        varied("value = 1000", "value = 1" + "0" * 400).encode(),
        "the number 10000000000000000000... is too large",
    ),
    (
        "10,000-deep parentheses in the rate",
        with_rate("(" * 10_000 + "B" + ")" * 10_000).encode(),
        "the formula is 20,001 characters long",
    ),
    ("invalid TOML", varied('symbol = "B"', "symbol = B").encode(), "this is not valid TOML"),
    ("unclosed header", varied("[model]", "[model").encode(), "Expected ']'"),
    ("duplicate key", varied("current = 640", "current = 640\ncurrent = 1").encode(), "overwrite"),
    ("NUL byte in the file", varied("current = 640", "current = 640\x00").encode(), "TOML"),
    (
        "parameter named like the state",
        varied("[parameters.H]", "[parameters.B]").encode(),
        "the name 'B' is declared twice",
    ),
    (
        "parameter named lambda",
        varied("[parameters.H]", '[parameters."lambda"]').encode(),
        "'lambda' is a reserved word and cannot name a parameter",
    ),
    (
        "parameter named exp",
        varied("[parameters.H]", "[parameters.exp]").encode(),
        "'exp' is reserved in formulas and cannot name a parameter",
    ),
    (
        "parameter named t",
        varied("[parameters.H]", "[parameters.t]").encode(),
        "'t' is reserved in formulas and cannot name a parameter",
    ),
    (
        "state named time",
        varied('symbol = "B"', 'symbol = "time"').encode(),
        "'time' is reserved in formulas and cannot name the state",
    ),
    (
        "dunder parameter",
        varied("[parameters.H]", "[parameters.__class__]").encode(),
        "'__class__' cannot be used as the name of a parameter",
    ),
    (
        "full-width parameter name",
        varied("[parameters.H]", '[parameters."Ｈ"]').encode(),
        "'Ｈ' cannot be used as the name of a parameter",
    ),
    ("unknown key", varied("current = 640", "curent = 640").encode(), "unknown key 'curent'"),
    ("unknown section", (BASE + '\n[modle]\nrate = "B"\n').encode(), "unknown key 'modle'"),
    (
        "range low above high",
        varied("range = [0.3, 0.7]", "range = [0.7, 0.3]").encode(),
        "the low end (0.7) must be below the high end (0.3)",
    ),
    (
        "range low equal to high",
        varied("range = [0.3, 0.7]", "range = [0.5, 0.5]").encode(),
        "the low end (0.5) must be below the high end (0.5)",
    ),
    (
        "range of three",
        varied("range = [0.3, 0.7]", "range = [0.3, 0.5, 0.7]").encode(),
        "expected a range of two numbers, [low, high]",
    ),
    (
        "range with nan",
        varied("range = [0.3, 0.7]", "range = [nan, 0.7]").encode(),
        "expected a finite number, found nan",
    ),
    (
        "missing title",
        varied('title = "Test stock under a catch limit"\n', "").encode(),
        "missing required key 'title' (Title shown on every page)",
    ),
    (
        "missing state",
        varied(STATE_TABLE, "").encode(),
        "missing required key 'state' (The state variable and its region)",
    ),
    ("missing rate", varied(RATE_LINE + "\n", "").encode(), "missing required key 'rate'"),
    (
        "value in quotes",
        varied("value = 0.5", 'value = "0.5"').encode(),
        'expected a number, found text "0.5"',
    ),
    (
        "year with decimals",
        varied("assessment_year = 2026", "assessment_year = 2026.5").encode(),
        "expected a whole number, found the number 2026.5",
    ),
    (
        "year as true",
        varied("assessment_year = 2026", "assessment_year = true").encode(),
        "expected a whole number, found true/false (true)",
    ),
    (
        "rate as a number",
        varied(RATE_LINE, "rate = 5").encode(),
        "expected text in quotes, found the number 5",
    ),
    (
        "tags as numbers",
        varied('tags = ["test"]', "tags = [1, 2]").encode(),
        "expected a list of texts, found a list",
    ),
    (
        "state as text",
        ('state = "B"\n' + varied(STATE_TABLE, "")).encode(),
        'expected a table ([state]), found text "B"',
    ),
    (
        "history entry as a number",
        ("history = [1]\n" + BASE).encode(),
        "expected a table ([[history]]), found the number 1",
    ),
    (
        "uncertainty of r as a number",
        (BASE + "\n[uncertainty]\nr = 0.1\n").encode(),
        "'r' needs a table of its own, [uncertainty.r]",
    ),
    (
        "unreadable unit",
        varied('unit = "kt/yr"', 'unit = "kt//yr"').encode(),
        "cannot read the unit 'kt//yr': unexpected '/'",
    ),
    ("empty file", b"", "missing required key 'scenario'"),
]


@pytest.mark.parametrize(
    ("content", "fragment"),
    [pytest.param(content, fragment, id=label) for label, content, fragment in FILE_CASES],
)
def test_file_is_refused_with_its_message(content: bytes, fragment: str) -> None:
    error = refused(lambda: load_bytes(content, "hostile.toml"), ScenarioError)
    assert fragment in error.message
    assert error.path == "hostile.toml"
    rendered = error.render()
    assert rendered.startswith("hostile.toml")
    assert len(rendered) < 2000, "a message must stay readable, whatever the input"


def test_non_utf8_renders_word_for_word() -> None:
    raw = BASE.encode().replace(b"biomass", b"bio\xe9mass")
    error = refused(lambda: load_bytes(raw, "stock.toml"), ScenarioError)
    assert error.render() == (
        "stock.toml:9: the file is not valid UTF-8 text (byte 182 cannot be read)\n"
        "  hint: save the file with UTF-8 encoding"
    )


def test_file_over_1_mb_on_disk_is_refused_before_reading(tmp_path: Path) -> None:
    path = tmp_path / "big.toml"
    path.write_bytes(BASE.encode() + b"#" * 1_000_000)
    error = refused(lambda: load_scenario(path), ScenarioError)
    assert error.render() == (
        f"{path}: the file is 1,000,504 bytes; scenario files may be at most 1,000,000\n"
        "  hint: keep long data in a separate CSV file"
    )


def test_invalid_toml_names_line_and_column() -> None:
    text = varied('symbol = "B"', "symbol = B")
    error = refused(lambda: load_text(text, "stock.toml", "stock"), ScenarioError)
    assert (error.line, error.column) == (8, 10)
    assert error.render() == (
        "stock.toml:8: this is not valid TOML: Invalid value\n"
        "    symbol = B\n"
        "             ^\n"
        "  hint: check quotes, brackets and '=' on this line; text values need quotes"
    )


def test_unknown_key_renders_did_you_mean() -> None:
    text = varied("current = 640", "curent = 640")
    error = refused(lambda: load_text(text, "stock.toml", "stock"), ScenarioError)
    assert error.render() == (
        "stock.toml:11: state.curent: unknown key 'curent'\n"
        "    curent = 640\n"
        "             ^\n"
        "  hint: did you mean 'current'? Allowed here: "
        "better, collapse_level, current, max, min, name, symbol, unit."
    )


def test_reserved_name_renders_word_for_word() -> None:
    text = varied("[parameters.H]", '[parameters."lambda"]')
    error = refused(lambda: load_text(text, "stock.toml", "stock"), ScenarioError)
    assert error.render() == (
        "stock.toml:24: parameters.lambda: "
        "'lambda' is a reserved word and cannot name a parameter\n"
        '    [parameters."lambda"]\n'
        "    ^\n"
        "  hint: choose another name, such as lambda_ or L"
    )


def test_parameter_named_like_the_state_renders_word_for_word() -> None:
    text = varied("[parameters.H]", "[parameters.B]")
    error = refused(lambda: load_text(text, "stock.toml", "stock"), ScenarioError)
    assert error.one_line() == "stock.toml:24: parameters.B: the name 'B' is declared twice"
    assert error.hint == "each parameter needs a name of its own, different from the state's symbol"


def test_reversed_range_renders_the_fix() -> None:
    text = varied("range = [0.3, 0.7]", "range = [0.7, 0.3]")
    error = refused(lambda: load_text(text, "stock.toml", "stock"), ScenarioError)
    assert error.render() == (
        "stock.toml:17: parameters.r.range: the low end (0.7) must be below the high end (0.3)\n"
        "    range = [0.7, 0.3]\n"
        "            ^\n"
        "  hint: write range = [0.3, 0.7]"
    )


def test_missing_required_key_renders_word_for_word() -> None:
    text = varied(RATE_LINE + "\n", "")
    error = refused(lambda: load_text(text, "stock.toml", "stock"), ScenarioError)
    assert error.render() == (
        "stock.toml:30: model: missing required key 'rate' "
        "(Right-hand side f of d(state)/dt = f(state; parameters))\n"
        "    [model]\n"
        "    ^\n"
        "  hint: add a line: rate = ..."
    )


def test_wrong_type_renders_word_for_word() -> None:
    text = varied("value = 0.5", 'value = "0.5"')
    error = refused(lambda: load_text(text, "stock.toml", "stock"), ScenarioError)
    assert error.render() == (
        'stock.toml:14: parameters.r.value: expected a number, found text "0.5"\n'
        '    value = "0.5"\n'
        "            ^\n"
        "  hint: write value = 0.5 (no quotes)"
    )


def test_prose_full_of_dots_is_not_mistaken_for_keys() -> None:
    paragraph = "Growth (cf. Verhulst, i.e. logistic) is fast. See www.example.org. " * 12
    notes = 'notes = """\n' + (paragraph + "\n") * 2000 + '"""\n'
    scenario = load_text(varied("[state]", notes + "\n[state]"), "stock.toml", "stock")
    assert scenario.notes.count("Verhulst") == 24_000


def test_bomb_message_names_the_line() -> None:
    text = BASE + "x = {a" + ".a" * 10_000 + " = 1}\n"
    error = refused(lambda: load_text(text, "stock.toml", "stock"), ScenarioError)
    assert error.one_line() == (
        f"stock.toml:{len(BASE.splitlines()) + 1}: "
        "the keys in this file have too many dotted parts to read"
    )
    assert error.hint == "scenario keys have at most four parts, such as policies.parameters.F"


def test_value_outside_its_range_is_a_warning_not_an_error() -> None:
    scenario = load_text(varied("value = 0.5", "value = 0.9"), "stock.toml", "stock")
    assert scenario.parameter("r").value == 0.9
    assert scenario.warnings == (
        "stock.toml:14: parameters.r.value: value 0.9 lies outside its range [0.3, 0.7]",
    )


def test_the_base_scenario_itself_is_valid_and_warns_of_nothing() -> None:
    scenario = load_text(BASE, "stock.toml", "stock")
    assert scenario.warnings == ()
    assert [p.name for p in scenario.parameters] == ["r", "K", "H"]


def test_folder_with_no_scenarios_is_refused(tmp_path: Path) -> None:
    (tmp_path / "notes.txt").write_text("not a scenario", encoding="utf-8")
    (tmp_path / "inner.toml").mkdir()
    error = refused(lambda: find_scenarios([str(tmp_path)]), ScenarioError)
    assert error.render() == (
        f"{tmp_path}: this folder holds no scenario files\n"
        "  hint: scenario files end in .toml; "
        "make one with: sitegen new FILE --template logistic-quota"
    )


def test_missing_path_and_non_file_are_refused(tmp_path: Path) -> None:
    error = refused(lambda: find_scenarios([str(tmp_path / "absent.toml")]), ScenarioError)
    assert error.message == "no such file or folder"
    error = refused(lambda: find_scenarios(["/dev/null"]), ScenarioError)
    assert error.message == "this is neither a scenario file nor a folder"


def test_file_name_that_cannot_be_a_page_name_is_refused() -> None:
    error = refused(lambda: load_bytes(BASE.encode(), "my stock.toml"), ScenarioError)
    assert error.message == "the file name 'my stock' cannot be used as a page name"


def test_load_bytes_works_with_its_default_path() -> None:
    assert load_bytes(BASE.encode()).slug == "scenario"


def test_long_source_lines_are_cut_around_the_caret() -> None:
    text = with_rate("B" + " + 1234567890" * 100 + " + xx")
    error = refused(lambda: load_text(text, "stock.toml", "stock"), ScenarioError)
    shown, caret = error.render().splitlines()[1:3]
    assert len(shown) < 140
    assert shown[caret.index("^") : caret.index("^") + 2] == "xx"
