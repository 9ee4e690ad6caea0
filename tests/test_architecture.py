"""House rules, read from the source with ``ast``: nothing here imports the package.

1. No module in sitegen/ calls ``eval``, ``exec``, ``sympify`` or ``parse_expr``
   (each runs text as code), by name or as an attribute, nor imports them.
2. Stages only look back: a module may import its own stage and earlier ones.
3. No module in sitegen/ is longer than 450 lines.
4. No two test functions in one test file share a name (the later one would
   silently replace the earlier).

Each rule is a function from source text to a list of violations, tested on
small samples first so that the rule itself is known to bite.
"""

from __future__ import annotations

import ast
from collections import Counter
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "sitegen"
TESTS = ROOT / "tests"

FORBIDDEN_CALLS = frozenset({"eval", "exec", "sympify", "parse_expr"})
MAX_MODULE_LINES = 450
STAGES = (
    "sitegen.errors",
    "sitegen.scenario",
    "sitegen.model",
    "sitegen.analysis",
    "sitegen.dynamics",
    "sitegen.fitting",
    "sitegen.figures",
    "sitegen.pages",
    "sitegen.site",
)
LAST = len(STAGES)  # sitegen.cli, sitegen.commands, sitegen.*_command, sitegen.__main__
FACADE = "sitegen"


# The rules ---------------------------------------------------------------------------
def forbidden_calls(source: str) -> list[str]:
    """``line: name`` for each call (or import) of a forbidden function."""
    found = []
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Call):
            func = node.func
            name = func.id if isinstance(func, ast.Name) else getattr(func, "attr", None)
            if name in FORBIDDEN_CALLS:
                found.append(f"{node.lineno}: {name}()")
        elif isinstance(node, ast.ImportFrom):
            found.extend(
                f"{node.lineno}: import {alias.name}"
                for alias in node.names
                if alias.name in FORBIDDEN_CALLS
            )
    return found


def stage_of(module: str) -> int | None:
    """The pipeline stage of a module of the package, or None if it has none."""
    if module == FACADE:
        return LAST - 1  # the façade may hold anything below the command line
    for index, prefix in enumerate(STAGES):
        if module == prefix or module.startswith(prefix + "."):
            return index
    top = module.split(".")[1] if module.count(".") >= 1 else ""
    if top in ("cli", "commands", "__main__") or top.endswith("_command"):
        return LAST
    return None


def module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def is_package_module(name: str) -> bool:
    relative = Path(*name.split("."))
    return (ROOT / relative).with_suffix(".py").is_file() or (ROOT / relative).is_dir()


def imported_modules(source: str, module: str, is_package: bool) -> list[tuple[int, str]]:
    """(line, module) for each import of the package's own modules."""
    found: list[tuple[int, str]] = []
    package = module if is_package else module.rpartition(".")[0]
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Import):
            found.extend(
                (node.lineno, alias.name)
                for alias in node.names
                if alias.name.split(".")[0] == FACADE
            )
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = package.split(".")[: len(package.split(".")) - node.level + 1]
                base = ".".join([*anchor, base] if base else anchor)
            if base.split(".")[0] != FACADE:
                continue
            for alias in node.names:
                candidate = f"{base}.{alias.name}"
                found.append((node.lineno, candidate if is_package_module(candidate) else base))
    return found


def stage_violations(source: str, module: str, is_package: bool = False) -> list[str]:
    """``line: message`` for each import of a later stage (or of a module of no stage)."""
    own = stage_of(module)
    if own is None:
        return [f"0: {module} belongs to no stage; add it to STAGES in this test"]
    problems = []
    for line, target in imported_modules(source, module, is_package):
        if target == module:
            continue
        theirs = stage_of(target)
        if theirs is None:
            problems.append(f"{line}: {target} belongs to no stage")
        elif theirs > own:
            problems.append(f"{line}: {module} (stage {own}) imports {target} (stage {theirs})")
    return problems


def duplicate_tests(source: str) -> list[str]:
    """Names of test functions defined more than once in one file."""
    names: list[str] = []
    tree = ast.parse(source)
    scopes = [tree.body] + [n.body for n in tree.body if isinstance(n, ast.ClassDef)]
    for body in scopes:
        names.extend(
            node.name
            for node in body
            if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef)
            and node.name.startswith("test")
        )
    return sorted(name for name, count in Counter(names).items() if count > 1)


# The rules bite ----------------------------------------------------------------------
@pytest.mark.parametrize(
    "source",
    [
        "eval('1')",
        "x = exec(code)",
        "import sympy\nsympy.sympify(text)",
        "from sympy import sympify as s",
        "from sympy.parsing.sympy_parser import parse_expr",
        "def f(t):\n    return parser.parse_expr(t)",
        "builtins.eval(t)",
    ],
)
def test_forbidden_call_rule_finds(source: str) -> None:
    assert forbidden_calls(source)


def test_forbidden_call_rule_passes_harmless_code() -> None:
    assert forbidden_calls("evaluate(x)\nname = 'eval'\nast.literal_eval('1')\n") == []


def test_stage_rule_finds_a_later_stage() -> None:
    source = "from sitegen.analysis import Result\n"
    assert stage_violations(source, "sitegen.scenario.loader") == [
        "1: sitegen.scenario.loader (stage 1) imports sitegen.analysis (stage 3)"
    ]
    assert stage_violations("import sitegen.cli\n", "sitegen.model.model")
    assert stage_violations("from sitegen import cli\n", "sitegen.pages")
    assert stage_violations("from sitegen import load_scenario\n", "sitegen.errors")
    assert stage_violations("from ..analysis import x\n", "sitegen.scenario.loader")


def test_stage_rule_allows_own_and_earlier_stages() -> None:
    source = (
        "from sitegen.errors import ScenarioError\n"
        "from sitegen.scenario.loader import load_scenario\n"
        "from . import records\n"
        "import numpy\n"
    )
    assert stage_violations(source, "sitegen.analysis.analyse") == []
    assert stage_violations("from sitegen import analyse_command\n", "sitegen.commands") == []
    assert stage_violations("from sitegen.pages import x\n", FACADE, is_package=True) == []


def test_stage_rule_keeps_the_command_line_out_of_the_facade() -> None:
    assert stage_violations("from sitegen.cli import main\n", FACADE, is_package=True)


def test_stage_rule_needs_every_module_in_a_stage() -> None:
    assert stage_violations("", "sitegen.helpers") == [
        "0: sitegen.helpers belongs to no stage; add it to STAGES in this test"
    ]
    assert stage_violations("import sitegen.helpers\n", "sitegen.cli") == [
        "1: sitegen.helpers belongs to no stage"
    ]


def test_duplicate_rule_finds_shadowed_tests() -> None:
    source = "def test_a():\n    pass\n\ndef test_b():\n    pass\n\ndef test_a():\n    pass\n"
    assert duplicate_tests(source) == ["test_a"]
    assert duplicate_tests("class T:\n    def test_x(self): ...\n    def test_x(self): ...\n")
    assert duplicate_tests("def test_a(): ...\ndef helper(): ...\ndef test_b(): ...\n") == []


# The package and the tests follow the rules --------------------------------------------
MODULES = sorted(PACKAGE.rglob("*.py"))
TEST_FILES = sorted(TESTS.rglob("test_*.py"))


def _id(path: Path) -> str:
    return str(path.relative_to(ROOT))


def test_the_package_has_modules() -> None:
    assert len(MODULES) >= 10
    assert len(TEST_FILES) >= 5


@pytest.mark.parametrize("path", MODULES, ids=_id)
def test_no_module_runs_text_as_code(path: Path) -> None:
    assert forbidden_calls(path.read_text(encoding="utf-8")) == []


@pytest.mark.parametrize("path", MODULES, ids=_id)
def test_no_module_imports_a_later_stage(path: Path) -> None:
    source = path.read_text(encoding="utf-8")
    name = module_name(path)
    assert stage_violations(source, name, is_package=path.name == "__init__.py") == []


# Modules already over the limit when the rule came in, owned by other work in
# progress. Strict: once one is split, its entry fails here until it is removed.
TO_BE_SPLIT: set[str] = set()


@pytest.mark.parametrize(
    "path",
    [
        pytest.param(
            path,
            marks=pytest.mark.xfail(strict=True, reason="over 450 lines; to be split"),
        )
        if _id(path) in TO_BE_SPLIT
        else path
        for path in MODULES
    ],
    ids=_id,
)
def test_no_module_is_longer_than_450_lines(path: Path) -> None:
    lines = len(path.read_text(encoding="utf-8").splitlines())
    assert lines <= MAX_MODULE_LINES, f"{lines} lines; split the module"


@pytest.mark.parametrize("path", TEST_FILES, ids=_id)
def test_no_two_test_functions_share_a_name(path: Path) -> None:
    assert duplicate_tests(path.read_text(encoding="utf-8")) == []
