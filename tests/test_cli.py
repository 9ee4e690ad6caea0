"""The ``sitegen check`` command, run as users run it: a separate process.

Exit codes: 0 all valid, 1 some invalid, 2 usage error. Problems are printed to
stderr as ``file:line: key: message``; a traceback appears only with --debug.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest
from scenario_support import BASE, RATE_LINE_NUMBER, with_rate

REPO = Path(__file__).resolve().parent.parent


def sitegen(*args: str, cwd: Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "sitegen", *args],
        cwd=cwd,
        capture_output=True,
        text=True,
        timeout=120,
    )


def no_traceback(result: subprocess.CompletedProcess[str]) -> None:
    assert "Traceback" not in result.stdout + result.stderr


@pytest.fixture
def folder(tmp_path: Path) -> Path:
    """A folder with one valid scenario, stock.toml."""
    (tmp_path / "stock.toml").write_text(BASE, encoding="utf-8")
    return tmp_path


def test_valid_file_exits_0_and_says_ok(folder: Path) -> None:
    result = sitegen("check", "stock.toml", cwd=folder)
    assert result.returncode == 0
    assert result.stdout == "ok  stock: state B (kt); parameters r, K, H; lever H\n"
    assert result.stderr == "1 of 1 scenario(s) valid\n"


def test_invalid_file_exits_1_with_file_line_key_message(folder: Path) -> None:
    (folder / "bad.toml").write_text(with_rate("r*B*(1 - B/Kk) - H"), encoding="utf-8")
    result = sitegen("check", "bad.toml", cwd=folder)
    assert result.returncode == 1
    assert result.stdout == ""
    lines = result.stderr.splitlines()
    assert lines[0] == f"bad.toml:{RATE_LINE_NUMBER}: model.rate: unknown name 'Kk'"
    assert lines[1:] == [
        '    rate = "r*B*(1 - B/Kk) - H"',
        "                       ^^",
        "  hint: did you mean 'K'? Allowed here: B, H, K, pi, r.",
        "0 of 1 scenario(s) valid",
    ]
    no_traceback(result)


def test_folder_with_valid_and_invalid_files_exits_1(folder: Path) -> None:
    (folder / "bad.toml").write_text(BASE.replace('unit = "kt/yr"', 'unit = "kt//yr"'), "utf-8")
    result = sitegen("check", ".", cwd=folder)
    assert result.returncode == 1
    assert result.stdout.startswith("ok  stock: ")
    assert result.stderr.splitlines()[0] == (
        "bad.toml:26: parameters.H.unit: cannot read the unit 'kt//yr': unexpected '/'"
    )
    assert result.stderr.endswith("1 of 2 scenario(s) valid\n")
    no_traceback(result)


def test_folder_of_valid_files_exits_0_and_quiet_drops_the_summary(folder: Path) -> None:
    (folder / "second.toml").write_text(BASE, encoding="utf-8")
    result = sitegen("check", "--quiet", str(folder), cwd=folder)
    assert result.returncode == 0
    assert result.stdout.splitlines() == [
        "ok  second: state B (kt); parameters r, K, H; lever H",
        "ok  stock: state B (kt); parameters r, K, H; lever H",
    ]
    assert result.stderr == ""


def test_warnings_are_printed_but_the_file_is_valid(folder: Path) -> None:
    (folder / "stock.toml").write_text(BASE.replace("value = 0.5", "value = 0.9"), "utf-8")
    result = sitegen("check", "stock.toml", cwd=folder)
    assert result.returncode == 0
    assert result.stdout.splitlines()[1] == (
        "    warning: stock.toml:14: parameters.r.value: "
        "value 0.9 lies outside its range [0.3, 0.7]"
    )


def test_empty_folder_and_missing_path_exit_1(tmp_path: Path) -> None:
    result = sitegen("check", ".", cwd=tmp_path)
    assert result.returncode == 1
    assert result.stderr.splitlines()[0] == ".: this folder holds no scenario files"
    result = sitegen("check", "absent.toml", cwd=tmp_path)
    assert result.returncode == 1
    assert result.stderr.splitlines() == [
        "absent.toml: no such file or folder",
        "  hint: check the spelling of the path",
    ]
    no_traceback(result)


def test_hostile_files_exit_1_and_run_nothing(tmp_path: Path) -> None:
    canary = tmp_path / "canary"
    (tmp_path / "inject.toml").write_text(
        with_rate(f"__import__('os').system('touch {canary}')"), encoding="utf-8"
    )
    (tmp_path / "binary.toml").write_bytes(b"\xff\xfe\x00garbage")
    (tmp_path / "huge.toml").write_bytes(BASE.encode() + b"#" * 1_000_000)
    (tmp_path / "bomb.toml").write_text("x = " + "[" * 50_000 + "]" * 50_000, encoding="utf-8")
    result = sitegen("check", ".", cwd=tmp_path)
    assert result.returncode == 1
    assert result.stdout == ""
    firsts = [line for line in result.stderr.splitlines() if not line.startswith(" ")]
    assert firsts == [
        "binary.toml:1: the file is not valid UTF-8 text (byte 1 cannot be read)",
        "bomb.toml: the file nests too deeply to read",
        "huge.toml: the file is 1,000,504 bytes; scenario files may be at most 1,000,000",
        f"inject.toml:{RATE_LINE_NUMBER}: model.rate: text strings are not allowed in a formula",
        "0 of 4 scenario(s) valid",
    ]
    assert not canary.exists()
    no_traceback(result)


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        ((), "usage: sitegen"),
        (("check",), "the following arguments are required: PATH"),
        (("chekc", "x.toml"), "invalid choice: 'chekc'"),
        (("check", "--nonsense", "x.toml"), "unrecognized arguments: --nonsense"),
        (("--nonsense",), "unrecognized arguments: --nonsense"),
    ],
)
def test_usage_errors_exit_2(args: tuple[str, ...], fragment: str, tmp_path: Path) -> None:
    result = sitegen(*args, cwd=tmp_path)
    assert result.returncode == 2
    assert fragment in result.stderr
    no_traceback(result)


def test_help_exits_0(tmp_path: Path) -> None:
    result = sitegen("--help", cwd=tmp_path)
    assert result.returncode == 0
    assert "check" in result.stdout


@pytest.mark.parametrize(
    "args", [("--debug", "check", "stock.toml"), ("check", "stock.toml", "--debug")]
)
def test_debug_is_accepted_before_and_after_the_command(
    args: tuple[str, ...], folder: Path
) -> None:
    result = sitegen(*args, cwd=folder)
    assert result.returncode == 0
    assert result.stdout.startswith("ok  stock: ")


BROKEN_LOADER = """
import sys
import sitegen.scenario.loader as loader

def broken(path):
    raise RuntimeError("boom")

loader.load_scenario = broken
from sitegen.cli import main
sys.exit(main(sys.argv[1:]))
"""


@pytest.mark.parametrize("debug", [False, True])
def test_internal_errors_show_a_traceback_only_with_debug(debug: bool, folder: Path) -> None:
    args = ["check", "stock.toml", *(["--debug"] if debug else [])]
    result = subprocess.run(
        [sys.executable, "-c", BROKEN_LOADER, *args],
        cwd=folder,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert result.returncode == 1
    if debug:
        assert "Traceback" in result.stderr
        assert result.stderr.rstrip().endswith("RuntimeError: boom")
    else:
        assert result.stderr == (
            "sitegen: internal error: RuntimeError: boom\n"
            "  hint: run again with --debug and report the traceback\n"
        )


def test_bundled_scenarios_are_valid() -> None:
    result = sitegen("check", "scenarios", cwd=REPO)
    assert result.returncode == 0, result.stderr
    assert "coastal-sprat" in result.stdout
    no_traceback(result)
