"""Amounts and flows keep the user's text: a charge in kg, a mixture in kg, feed-stream flows in kg/h
and kmol/h appear in results.json as written (``as_written``, ``u_as_written``) beside the value
converted to mol or mol/s, and the report's input table shows the text ("27495 (881 kg)").

Outside reference for the conversion: the molar masses from ``chemicals.elements.molecular_weight``
(IUPAC standard atomic weights as tabulated by the ``chemicals`` library), not the project's own
``thermo/composition.py``.
"""

from __future__ import annotations

import json

import pytest

from conftest import invented_case_text, run_written_case

chemicals_elements = pytest.importorskip("chemicals.elements")


def _M(formula: str) -> float:
    """Molar mass in kg/mol from chemicals (g/mol there)."""
    return chemicals_elements.molecular_weight(chemicals_elements.nested_formula_parser(formula)) / 1e3


CASE = invented_case_text(title="amounts as written", samples=400, output='''
[[output]]
name = "rise"
kind = "adiabatic_temperature_rise"
reaction = "R"
start_temperature = "300 K"
extent = { value = "1 mol", u = "0.05 mol" }
charge = { "S(l)" = { value = "881 kg", u = "2 kg" }, "P(l)" = "10 mol" }

[[output]]
name = "warm"
kind = "heating_enthalpy"
mixture = { "S(l)" = "3 kg" }
from = "300 K"
to = "320 K"

[[output]]
name = "duty"
kind = "heat_release"
temperature = "320 K"
extent_rate = { R = "1.5 mol/s" }
[[output.feed]]
temperature = "300 K"
flows = { "A(l)" = { value = "4600 kg/h", U = "100 kg/h", k = 2 }, "S(l)" = "12 kmol/h" }
''')


@pytest.fixture(scope="module")
def run_dir(tmp_path_factory):
    got = run_written_case(tmp_path_factory.mktemp("asw"), CASE, "--samples", "400", "--force")
    assert got["code"] == 0, got["stderr"]
    return got["out"]


def _inputs(out) -> dict:
    res = json.loads((out / "results.json").read_text(encoding="utf-8"))
    return {i["datum"]: i for i in res["inputs"]}, res


def test_results_json_keeps_the_amounts_as_written_beside_the_converted_values(run_dir):
    rows, res = _inputs(run_dir)
    M_S, M_A = _M("CH4O"), _M("C2H4O")        # 32.042 and 44.053 g/mol (chemicals)
    # charge in kg: n = m / M
    s = rows["output.rise.charge.S.l"]
    assert (s["as_written"], s["u_as_written"], s["unit"]) == ("881 kg", "2 kg", "mol")
    assert s["estimate"] == pytest.approx(881 / M_S, rel=1e-4)
    assert s["standard_uncertainty"] == pytest.approx(2 / M_S, rel=1e-4)
    # an amount in mol keeps its text too (no uncertainty given: no u_as_written)
    p = rows["output.rise.charge.P.l"]
    assert p["as_written"] == "10 mol" and "u_as_written" not in p and p["estimate"] == pytest.approx(10.0)
    # mixture in kg
    w = rows["output.warm.mixture.S.l"]
    assert w["as_written"] == "3 kg" and w["estimate"] == pytest.approx(3 / M_S, rel=1e-4)
    # feed in kg/h: ṅ = ṁ / M / 3600 (mol/s); U with k keeps its form, never passed off as u
    a = rows["output.duty.feed[0].A.l"]
    assert (a["as_written"], a["u_as_written"], a["unit"]) == ("4600 kg/h", "U = 100 kg/h (k = 2)", "mol/s")
    assert a["estimate"] == pytest.approx(4600 / M_A / 3600, rel=1e-4)
    assert a["standard_uncertainty"] == pytest.approx(50 / M_A / 3600, rel=1e-4)
    # feed in kmol/h: 12 kmol/h = 12000/3600 mol/s (no molar mass involved)
    k = rows["output.duty.feed[0].S.l"]
    assert k["as_written"] == "12 kmol/h" and k["estimate"] == pytest.approx(12000 / 3600, rel=1e-12)
    # data not written as amounts carry no such key
    assert "as_written" not in rows["A.l.formation_enthalpy"]
    # the GUM budget row of the charge carries the text beside x_i
    rise = next(o for o in res["outputs"] if o["name"] == "rise")
    row = next(r for r in rise["points"][0]["budget"]["rows"] if r["datum"] == "output.rise.charge.S.l")
    assert row["as_written"] == "881 kg" and row["u_as_written"] == "2 kg"
    assert row["estimate"] == pytest.approx(881 / M_S, rel=1e-4)


def test_report_shows_the_amounts_as_written(run_dir):
    rows, _ = _inputs(run_dir)
    md = (run_dir / "report.md").read_text(encoding="utf-8")
    html = (run_dir / "report.html").read_text(encoding="utf-8")
    for datum, written in (("output.rise.charge.S.l", "881 kg"), ("output.warm.mixture.S.l", "3 kg"),
                           ("output.duty.feed[0].A.l", "4600 kg/h"), ("output.duty.feed[0].S.l", "12 kmol/h")):
        # input table (Datum | Quantity | Value | …): the value in mol or mol/s, then the text as written
        lines = [ln for ln in md.splitlines() if ln.replace("\\", "").startswith(f"| {datum} |")]
        assert any(f"({written}) |" in ln and ln.split(" | ")[1] in ("amount", "feed flow") for ln in lines), lines
        assert f"({written})" in html
    # the GUM budget table of the duty names the feed with its text beside x_i
    assert any(ln.replace("\\", "").startswith("| output.duty.feed[0].A.l (4600 kg/h) |") for ln in md.splitlines())
    # an amount written in the table's own unit is not repeated: "10 mol" beside mol
    line = next(ln for ln in md.splitlines() if "output.rise.charge.P.l" in ln.replace("\\", ""))
    assert "(10 mol)" not in line
    csv = (run_dir / "tables" / "inputs.csv").read_text(encoding="utf-8")
    assert "881 kg" in csv and "4600 kg/h" in csv
    docx = run_dir / "report.docx"
    if docx.exists():
        import docx as python_docx

        cells = {c.text for t in python_docx.Document(str(docx)).tables for r in t.rows for c in r.cells}
        assert any("(881 kg)" in c for c in cells) and any("(4600 kg/h)" in c for c in cells)


def test_uncertainty_forms_as_written():
    from uqthermo.case.readers.amounts import written_texts

    assert written_texts("881 kg", "exact") == ("881 kg", None)
    assert written_texts({"value": " 4600  kg/h ", "u": "50 kg/h"}, "u = 50 kg/h") == ("4600 kg/h", "50 kg/h")
    assert written_texts({"value": "20 kg", "half_width": "1 kg"}, "half-width 1 kg") == ("20 kg", "half-width 1 kg")
    assert written_texts({"value": "20 kg"}, "exact") == ("20 kg", None)
