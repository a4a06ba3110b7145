"""The I/O helpers (icecolumn/textfile.py, texttable.py, timeutil.format_duration) and the
command-line plumbing (one registration, no import cycle).  No outside check values here."""
from __future__ import annotations

import ast
from pathlib import Path

import numpy as np
import pytest

from icecolumn.errors import InputError
from icecolumn.textfile import (cell_numbers, check_new_output, output_path, read_csv, write_atomically,
                                write_text_atomically)
from icecolumn.texttable import text_table
from icecolumn.timeutil import format_duration, format_time, parse_duration

PACKAGE = Path(__file__).resolve().parent.parent / "icecolumn"


def _error(path, **kwargs) -> str:
    with pytest.raises(InputError) as info:
        read_csv(path, "test file", **kwargs)
    message = str(info.value)
    assert "\n" not in message and message.startswith(f"{path}: ")
    return message


# --------------------------------------------------------------------------- CSV


def test_read_csv_rows_lines_comments_and_quotes(tmp_path):
    p = tmp_path / "a.csv"
    p.write_text('# title line\n#second\n\ntime, value ,note\n2027-01-01,1.5,"a, b"\n# inside\n\n'
                 '2027-01-02 , -2,plain\r\n')
    t = read_csv(p, "test file")
    assert t.header == ["time", "value", "note"] and t.header_line == 4
    assert t.lines == [5, 8]
    assert t.rows == [["2027-01-01", "1.5", "a, b"], ["2027-01-02", "-2", "plain"]]
    assert t.comments == ["title line", "second"]
    assert t.column("note") == ["a, b", "plain"]
    np.testing.assert_array_equal(t.numbers("value"), [1.5, -2.0])
    assert t.raw == p.read_bytes()


@pytest.mark.parametrize("text, fragment", [
    ("", "file is empty (expected columns time, x)"),
    ("# only a comment\n", "no header row (only comments)"),
    ("time,x\n", "no data rows after the header (line 1)"),
    ("time,x\n1,2\n3\n", "line 3: expected 2 fields as in the header (line 1), found 1"),
    ("time,x,x\n1,2,3\n", "line 1: column name 'x' appears twice"),
    ("time,,x\n1,2,3\n", "line 1: column 2 of the header has no name"),
    ('time,x\n1,"2\n', "line 2: malformed CSV"),
    (b"time,x\n1,\xff\n", "line 2: not UTF-8 text"),
])
def test_read_csv_one_line_errors(tmp_path, text, fragment):
    p = tmp_path / "bad.csv"
    p.write_bytes(text if isinstance(text, bytes) else text.encode())
    assert fragment in _error(p, expected="time, x")


def test_require_names_the_header_line(tmp_path):
    p = tmp_path / "a.csv"
    p.write_text("# c\ntime,depth\n2027-01-01,0.1\n")
    with pytest.raises(InputError, match=r"line 2: missing column\(s\) temperature \(found time, depth\)$"):
        read_csv(p, "thermistor file").require(("time", "depth", "temperature"))


def test_cell_numbers_errors_and_gaps():
    lines = [3, 4, 7]
    np.testing.assert_array_equal(cell_numbers("f", "x", ["1", "", "2e3"], lines, empty_is_gap=True),
                                  [1.0, np.nan, 2000.0])
    with pytest.raises(InputError, match=r"^f: line 4: column 'x' is empty$"):
        cell_numbers("f", "x", ["1", "", "2"], lines)
    with pytest.raises(InputError, match=r"^f: line 7: column 'x': 'abc' is not a number$"):
        cell_numbers("f", "x", ["1", "2", "abc"], lines)
    with pytest.raises(InputError, match=r"^f: line 4: column 'x': inf is not a finite number$"):
        cell_numbers("f", "x", ["1", "inf", "2"], lines, empty_is_gap=True)
    with pytest.raises(InputError, match=r"^f: line 3: column 'x': -1 m is negative$"):
        cell_numbers("f", "x", ["-1", "0", "2"], lines, nonnegative_unit="m")


# --------------------------------------------------------------------------- outputs


def test_output_path_and_check(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert output_path(None, "run.nc") == Path("run.nc")
    assert output_path(tmp_path, "run.nc") == tmp_path / "run.nc"
    assert output_path(tmp_path / "other.nc", "run.nc") == tmp_path / "other.nc"
    (tmp_path / "kept.nc").write_text("keep")
    with pytest.raises(InputError, match=r"kept\.nc: file exists; use --overwrite to replace it$"):
        check_new_output(tmp_path / "kept.nc")
    assert check_new_output(tmp_path / "kept.nc", overwrite=True) == tmp_path
    with pytest.raises(InputError, match="does not exist"):
        check_new_output(tmp_path / "no" / "x.nc")


def test_atomic_write_leaves_nothing_on_failure(tmp_path):
    target = tmp_path / "out.txt"
    target.write_text("old")

    def fail(tmp):
        Path(tmp).write_text("half")
        raise RuntimeError("disk full")

    with pytest.raises(RuntimeError):
        write_atomically(target, fail)
    assert target.read_text() == "old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.txt"]
    with pytest.raises(InputError, match="file exists"):
        write_text_atomically(target, "new")
    write_text_atomically(target, "new\n", overwrite=True)
    assert target.read_text() == "new\n" and sorted(p.name for p in tmp_path.iterdir()) == ["out.txt"]


# --------------------------------------------------------------------------- tables and durations


def test_text_table_aligns_columns_with_units_and_footer():
    text = text_table([("name", ""), ("value", "m")], [["a", "1.5"], ["longer", "12.25"]], footer=["total", "13.75"],
                      title="Title")
    lines = text.splitlines()
    assert text.endswith("\n") and lines[0] == "Title"
    assert lines[1].split() == ["name", "value"] and lines[2].split() == ["m"]
    assert set(lines[3]) == {"-"} and set(lines[6]) == {"-"}
    assert lines[4].startswith("a ") and lines[5].startswith("longer")
    assert len({len(line) for line in lines[1:]}) == 1  # right-aligned last column
    assert lines[7].split() == ["total", "13.75"]
    plain = text_table([("a", ""), ("b", "")], [["[x]", "y"]])  # no units line; brackets are not markup
    assert plain.splitlines()[0].split() == ["a", "b"] and "[x]" in plain


@pytest.mark.parametrize("seconds, text", [(86400.0, "1D"), (172800.0, "2D"), (21600.0, "6h"), (5400.0, "90min"),
                                           (60.0, "1min"), (1.5, "1.5s"), (90.0, "90s")])
def test_format_duration_round_trips(seconds, text):
    assert format_duration(seconds) == text
    assert parse_duration(text) == seconds


def test_format_time_to_the_minute():
    assert format_time(np.datetime64("2027-01-15T06:30:59", "ns"), "m") == "2027-01-15T06:30Z"


# --------------------------------------------------------------------------- command modules


def test_command_modules_do_not_import_the_cli_module():
    """One way to register commands (COMMANDS in every cli_<name>.py) and no import cycle."""
    from icecolumn import cli

    modules = sorted(PACKAGE.glob("cli_*.py"))
    assert modules
    for path in modules:
        tree = ast.parse(path.read_text())
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom):
                assert not (node.level == 1 and node.module == "cli"), path.name
                assert node.module != "icecolumn.cli", path.name
            if isinstance(node, ast.Import):
                assert all(a.name != "icecolumn.cli" for a in node.names), path.name
    names = {c.name for c in cli.app.registered_commands}
    assert names == {"run", "config", "demo", "check", "laws", "plot", "forecast", "calibrate", "ensemble", "buoy"}


def test_same_option_names_for_the_same_things():
    """The model-running commands take -c, --set and --column; profiles are --thermistor/--core."""
    import typer

    from icecolumn import cli

    group = typer.main.get_command(cli.app)

    def options(name):
        return {o for p in group.commands[name].params for o in p.opts}

    for name in ("run", "forecast", "calibrate"):
        assert {"-c", "--set", "--column", "-o", "--overwrite"} <= options(name), name
    assert {"--set", "--column", "-o", "--overwrite"} <= options("ensemble")
    assert "--set" in options("demo")
    for name in ("plot", "forecast"):
        assert {"--thermistor", "--core", "--obs"} <= options(name), name
    for name in ("run", "check", "forecast", "calibrate"):  # the forcing file is the positional argument
        positional = [p for p in group.commands[name].params if p.param_type_name == "argument"]
        assert [p.metavar for p in positional] == ["FORCING"], name
