"""User text leaving the tool (issue 15, items 5-7): CSV cells, terminal markup, control characters.

Reference for the CSV rules: the OWASP "CSV Injection" guidance (cells beginning with
``=``, ``+``, ``-``, ``@``, tab or carriage return are neutralised with a leading apostrophe;
every cell is quoted where the format requires it). The CSV files the tool writes are read
back with Python's ``csv`` module and pandas — readers outside the project — in the way a
spreadsheet reads them (``newline=""``: a bare CR ends a row unless quoted).
"""

from __future__ import annotations

import csv
import io
import json

import pandas as pd
import pytest

from conftest import BASE_CASE, main_in_process, write_case
from uqthermo.text_safety import csv_cell, csv_text, markup, terminal_text

# --------------------------------------------------------------------------- CSV cells

FORMULA_LIKE = [
    "=1+1", "+1+1", "-1+1", "@SUM(A1)", "\t=1", "\r=1", "\n=1", "  =1", "\u00a0=cmd|' /C calc'!A0",
    "\u3000=1", "\u2003@x", "\ufeff=1", "\uff1d1+1", "\uff0b1", "\uff0d1", "\uff20SUM(A1)", "\ufe661", "-2+3",
    "- 5", "-cmd|' /C calc'!A0", "+-1", "=HYPERLINK(\"http://x\")",
]
PLAIN = ["-205.3", "-1e-3", "+5", "12", "1.5e+10", "-.5", "hello", "a=b", "ΔrH", "", "(-5)"]


@pytest.mark.parametrize("cell", FORMULA_LIKE)
def test_formula_like_cells_are_neutralised(cell):
    out = csv_cell(cell)
    assert out == "'" + cell


@pytest.mark.parametrize("cell", PLAIN)
def test_plain_cells_and_negative_numbers_stay_as_they_are(cell):
    assert csv_cell(cell) == cell
    assert csv_cell(-205.3) == -205.3


def test_cr_and_lf_cells_are_quoted_so_no_row_can_be_injected():
    payload = "NIST WebBook\r=2+5+cmd|' /C calc'!A0"
    text = csv_text(["datum", "source", "u"], [["a", payload, -0.5], ["b", "x\ny", 1.0], ["c", 'say "hi", ok', None]])
    rows = list(csv.reader(io.StringIO(text, newline="")))
    assert len(rows) == 4 and all(len(r) == 3 for r in rows)
    assert rows[1] == ["a", payload, "-0.5"]
    assert rows[2][1] == "x\ny" and rows[3] == ["c", 'say "hi", ok', ""]
    df = pd.read_csv(io.StringIO(text))
    assert len(df) == 3 and df["u"].iloc[0] == -0.5


def test_injection_through_a_case_source_end_to_end(tmp_path):
    """The issue's payload in a ``source``: tables/inputs.csv keeps one row per datum and the cell is
    quoted; a formula at the start of a source is neutralised."""
    text = BASE_CASE.replace('source = "IAPWS-95 via chemicals"', 'source = "NIST WebBook\\r=2+5+cmd|\' /C calc\'!A0"')
    text = text.replace('source = "gri30.yaml"', 'source = "\u00a0=HYPERLINK(\\"http://evil\\")"', 1)
    case = write_case(tmp_path, text)
    out = tmp_path / "out"
    code, stdout, err = main_in_process("run", case, "--out", out, "--samples", "1000", "--quiet", "--no-report")
    assert code == 0, err
    raw = (out / "tables" / "inputs.csv").read_bytes().decode("utf-8")
    with open(out / "tables" / "inputs.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    n_data = len(json.loads((out / "results.json").read_text())["inputs"])
    assert len(rows) == n_data + 1 and len({len(r) for r in rows}) == 1
    assert '"NIST WebBook\r=2+5' in raw
    cells = [c for r in rows for c in r]
    assert "'\u00a0=HYPERLINK(\"http://evil\")" in cells
    for c in cells:    # nothing a spreadsheet would evaluate
        assert not c.lstrip(" \u00a0").startswith(("=", "+", "@", "\t", "\r")) or c.startswith("'"), c


# --------------------------------------------------------------------------- terminal text

def test_terminal_text_makes_control_characters_visible():
    s = "a\x1b[2Jb\x1b]8;;http://evil\x07link\x1b]8;;\x07\rc\nd\x9be\u202ef\u2066g\x7f"
    t = terminal_text(s)
    assert all(ord(ch) >= 0x20 and not 0x7F <= ord(ch) <= 0x9F for ch in t)
    assert "\u202e" not in t and "\u2066" not in t
    assert t == "a\\x1b[2Jb\\x1b]8;;http://evil\\x07link\\x1b]8;;\\x07\\rc\\nd\\x9be\\u202ef\\u2066g\\x7f"
    assert terminal_text("°C ΔrH — 水 😀") == "°C ΔrH — 水 😀"          # ordinary Unicode is untouched
    assert terminal_text("x" * 5000).endswith("… (5000 characters)")
    assert markup("[bold]x[/bold] [kJ/mol]") == "\\[bold]x\\[/bold] \\[kJ/mol]"


HOSTILE_TITLE = ("Heat balance [/bold] check [clickme] \\u001b[2J\\u001b]8;;http://evil\\u0007link\\u001b]8;;\\u0007 "
                 "\\u202e rtl :warning:")


def test_user_text_is_never_terminal_markup_or_control_codes(tmp_path):
    text = BASE_CASE.replace('title = "Water-gas shift at 700 K (test case, published data)"',
                             f'title = "{HOSTILE_TITLE}"')
    case = write_case(tmp_path, text)
    code, stdout, err = main_in_process("run", case, "--out", tmp_path / "out", "--samples", "1000", "--no-report")
    assert code == 0, err
    assert "Heat balance [/bold] check [clickme]" in stdout           # printed as written
    assert "dH_700K [kJ/mol]" in stdout and "steam [kJ/mol]" in stdout  # unit labels visible
    assert ":warning:" in stdout and "⚠" not in stdout                  # no emoji codes either
    for stream in (stdout, err):
        assert "\x1b" not in stream and "\x07" not in stream and "\u202e" not in stream
    assert "\\x1b[2J" in stdout and "\\u202e" in stdout


def test_plan_prints_user_text_as_written(tmp_path):
    text = BASE_CASE.replace('title = "Water-gas shift at 700 K (test case, published data)"',
                             'title = "Plan [/bold] [red]x \\u001b[31m"')
    text += ('\n[[candidate]]\ndatum = "H2O.transition.l-g.enthalpy"\nu = "0.005 kJ/mol"\ncost = 100\n'
             'note = "[bold]new[/bold] measurement"\n')
    case = write_case(tmp_path, text)
    code, stdout, err = main_in_process("plan", case, "--budget", "1000")
    assert code == 0, err
    assert "Plan [/bold] [red]x \\x1b[31m" in stdout and "[bold]new[/bold] measurement" in stdout
    assert "\x1b" not in stdout


def test_a_key_with_a_newline_cannot_forge_an_error_line(tmp_path):
    forged = "c.toml: settings.seed: forged"
    case = write_case(tmp_path, BASE_CASE + f'[species."X\\n{forged}\\u001b[2K"]\nformula = "H2"\n')
    code, stdout, err = main_in_process("check", case)
    assert code == 2
    lines = err.splitlines()
    assert lines[-1] == "1 problem(s) found" and len(lines) == 2
    assert lines[0].startswith(f"{case}: species.X\\nc.toml: settings.seed: forged\\x1b[2K")
    assert "\x1b" not in err


def test_error_lines_escape_file_names(tmp_path):
    bad = tmp_path / "case\x1b[2J\u202e.toml"
    code, stdout, err = main_in_process("run", bad, "--out", tmp_path / "out")
    assert code == 2 and "file not found" in err
    assert "\x1b" not in err and "\u202e" not in err and "\\x1b[2J\\u202e.toml" in err
