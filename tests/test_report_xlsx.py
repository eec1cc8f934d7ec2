"""The study workbook: numbers equal the JSON, changes are variant minus baseline,
text stays text, charts, frozen headers, valid sheet names, atomic and safe writing.

Outside references are named beside each check.
"""

from __future__ import annotations

import json
import math
import os
import re
import shutil
import stat
import subprocess
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest

from tractive.errors import InputError
from tractive.report.xlsx import build_workbook, sheet_title, write_workbook
from tractive.study import METRICS, run_study
from tractive.study.results import ResultRow, StudyResult
from tractive.vehicle import load_vehicle
from study_vehicles import DIESEL, EV


#: variant and profile names a spreadsheet would take for formulas
HYPER = '=HYPERLINK("http://example.invalid","open")'
FORMULA_NAMES = (HYPER, "+roof", "-mass", "@tyres", "=1+1")
LONG_A = "driver's city [urban]: a name much longer than thirty-one characters"
LONG_B = "driver's city [urban]: a name much longer than thirty-one characters, again"

STUDY = f"""\
name: workbook study
baseline:
  vehicle: ev.yaml
modifications:
  - name: '{HYPER}'
    cost: 300
    changes: {{cda_m2: +0.1, mass_kg: +12}}
  - name: "+roof"
    cost: 400
    changes:
      crr: -20%
      crr_std: 0.0003
  - name: "-mass"
    changes: {{powertrain.battery_usable_kwh: +15, mass_kg: +90}}
combinations:
  - name: "@tyres"
    modifications: all
driving:
  profiles:
    - udds
    - {{name: "=1+1", profile: "steady:90kmh:300s"}}
    - {{name: "{LONG_A}", profile: "steady:60kmh:120s"}}
    - {{name: "{LONG_B}", profile: "steady:120kmh:120s"}}
  mixes:
    - name: mixed
      shares_pct: {{udds: 55, "=1+1": 45}}
economics:
  annual_distance_km: 15000
  electricity_price_per_kwh: 0.3
  discount_rate_pct: 4
  service_life_years: 6
uncertainty:
  draws: 60
  seed: 3
"""


def _study(folder: Path, study_text=STUDY, vehicle_text=EV) -> Path:
    (folder / "ev.yaml").write_text(vehicle_text, encoding="utf-8")
    path = folder / "study.yaml"
    path.write_text(study_text, encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def case(tmp_path_factory):
    folder = tmp_path_factory.mktemp("wb")
    study = _study(folder)
    result = run_study(study)
    out = write_workbook(result, folder / "report.xlsx", inputs=[study, folder / "ev.yaml"])
    wb = openpyxl.load_workbook(out)
    # the JSON the CLI prints, read back as JSON
    data = json.loads(json.dumps(result.to_dict(include_series=True)))
    return {"folder": folder, "study": study, "result": result, "path": out, "wb": wb,
            "json": data}


def _header_keys(result):
    """Summary group header text "label [unit]" → metric key."""
    return {f"{METRICS[k].label} [{result.unit_of(k)}]": k for k in result.metric_keys()
            if k in METRICS}


def _summary_table(ws, result):
    """{(profile, variant): {key: {"value", "change", "change_pct", "low", "high", "dist"}}}"""
    keys = _header_keys(result)
    blocks = []
    group = None
    for c in range(3, ws.max_column + 1):
        top = ws.cell(row=3, column=c).value
        if top is not None:
            group = keys.get(top)           # None: a group that is no metric (the verdict)
        blocks.append((c, group, ws.cell(row=4, column=c).value))
    table = {}
    for r in range(5, ws.max_row + 1):
        p, v = ws.cell(row=r, column=1).value, ws.cell(row=r, column=2).value
        if p is None:
            continue
        rec = table.setdefault((p, v), {})
        for c, key, sub in blocks:
            rec.setdefault(key, {})[sub] = ws.cell(row=r, column=c)
    return table


# ---------------------------------------------------------------------------
# numbers
# ---------------------------------------------------------------------------

def test_summary_change_is_variant_minus_baseline_and_equals_json(case):
    # definition of a change in this tool: variant minus baseline, same profile and metric
    result, ws = case["result"], case["wb"]["Summary"]
    rows = {(r["profile"], r["variant"]): r for r in case["json"]["rows"]}
    table = _summary_table(ws, result)
    checked = 0
    for (p, v), rec in table.items():
        base = table[(p, "baseline")]
        jrow = rows[(p, v)]
        for key, cells in rec.items():
            if "change" not in cells:
                continue
            value = cells["value"].value
            assert value == jrow.get(key)
            if v == "baseline":
                assert cells["change"].value is None
                continue
            change = cells["change"].value
            if change is None:
                assert key not in jrow["change"]
                continue
            assert cells["change"].data_type == "n"
            assert change == value - base[key]["value"].value      # exact, same doubles
            assert change == jrow["change"][key]
            assert cells["change %"].value == jrow["change_pct"][key]
            checked += 1
    assert checked >= 4 * 4 * 5


def test_every_number_of_all_results_equals_json(case):
    ws = case["wb"]["All results"]
    head = [c.value for c in ws[1]]
    col = {h: i for i, h in enumerate(head)}
    rows = {(r["profile"], r["variant"]): r for r in case["json"]["rows"]}
    fields = {"Value": None, "Change": "change", "Change %": "change_pct",
              "Monte Carlo mean": "mean", "Low end of 95 % interval": "interval_low",
              "High end of 95 % interval": "interval_high",
              "Change, Monte Carlo mean": "change_mean",
              "Change, low end of 95 % interval": "change_low",
              "Change, high end of 95 % interval": "change_high"}
    seen = set()
    n_lines = 0
    for line in ws.iter_rows(min_row=2):
        p, v, key = line[col["Profile or duty mix"]].value, line[col["Variant"]].value, \
            line[col["Metric key"]].value
        j = rows[(p, v)]
        for head_text, part in fields.items():
            cell = line[col[head_text]]
            want = j[key] if part is None else j[part].get(key)
            assert cell.value == want, (p, v, key, head_text)
            if want is not None:
                assert cell.data_type == "n"
        flag = j["distinguishable"].get(key)
        got = line[col["Change distinguishable from zero"]].value
        assert got == (None if flag is None else ("yes" if flag else "no"))
        assert line[col["Unit"]].value == case["json"]["metric_units"][key] or \
            (line[col["Unit"]].value is None and case["json"]["metric_units"][key] == "")
        seen.add((p, v, key))
        n_lines += 1
    # every metric of every row is there, once
    expected = {(r["profile"], r["variant"], k) for r in case["json"]["rows"]
                for k in case["json"]["metric_units"] if k in r}
    assert seen == expected and n_lines == len(expected)


def test_stored_doubles_keep_every_digit(tmp_path):
    # IEEE 754 binary64: 0.1 + 0.2 = 0.30000000000000004 needs 17 significant digits;
    # written with 16 ("%.16g") it would read back as 0.3, a different double
    base_v, var_v = 0.1, 0.1 + 0.2
    assert float("%.16g" % var_v) != var_v
    key = "positive_energy_wh_per_km"
    rows = (ResultRow("baseline", "baseline", "p", "profile", {key: base_v}),
            ResultRow("v", "modification", "p", "profile", {key: var_v},
                      change={key: var_v - base_v}, change_pct={key: 100 * (var_v - base_v) /
                                                                base_v}))
    res = StudyResult("s", "s.yaml", "metric", "EUR", rows)
    out = write_workbook(res, tmp_path / "r.xlsx")
    ws = openpyxl.load_workbook(out)["All results"]
    values = {(r[1].value, r[16].value): (r[4].value, r[5].value)
              for r in ws.iter_rows(min_row=2)}
    assert values[("v", key)] == (var_v, var_v - base_v)
    assert values[("baseline", key)] == (base_v, None)


def test_attribution_parts_add_up_and_equal_the_change(case):
    result, ws = case["result"], case["wb"]["Attribution"]
    groups_row = [c.value for c in ws[2]]
    top = [c.value for c in ws[1]]
    # column ranges of the two group blocks (row 1 holds the merged block titles)
    sh0 = next(i for i, t in enumerate(top) if t and t.startswith("share of the change"))
    oat0 = next(i for i, t in enumerate(top) if t and t.startswith("change with only"))
    inter = next(i for i, t in enumerate(groups_row) if t and t.startswith("interaction"))
    key_col = groups_row.index("metric key")
    shapley_cols = {groups_row[i]: i for i in range(sh0, inter)}
    oat_cols = {groups_row[i]: i for i in range(oat0, key_col)}
    jattr = {(a["variant"], a["profile"], a["metric"]): a for a in case["json"]["attribution"]}
    n = 0
    for line in ws.iter_rows(min_row=3):
        v, p, key = line[0].value, line[1].value, line[key_col].value
        a = jattr[(v, p, key)]
        total = line[4].value
        assert total == a["total"]
        parts = {g: line[i].value for g, i in shapley_cols.items() if line[i].value is not None}
        oat = {g: line[i].value for g, i in oat_cols.items() if line[i].value is not None}
        assert parts == a["parts"] and oat == a["one_at_a_time"]
        assert line[inter].value == a["interaction"]
        # Shapley (1953) efficiency: the values add up to the whole change
        assert math.isclose(sum(parts.values()), total, rel_tol=1e-9, abs_tol=1e-9)
        # the attributed change is the variant minus the baseline on the same profile
        row, base = result.row(v, p), result.row("baseline", p)
        assert math.isclose(total, row.metrics[key] - base.metrics[key], rel_tol=1e-9,
                            abs_tol=1e-9)
        n += 1
    assert n == len(result.attribution) > 0


def test_time_series_equal_json_and_power_is_force_times_speed(case):
    wb = case["wb"]
    series = {(s["variant"], s["profile"]): s for s in case["json"]["series"]}
    sheet_of = {"udds": "Profile udds", "=1+1": "Profile =1+1"}
    for profile, title in sheet_of.items():
        ws = wb[title]
        names = [c.value for c in ws[1]]
        heads = [c.value for c in ws[2]]
        assert heads[0].endswith("[s]") and heads[1].endswith("[km/h]")
        cols = list(ws.iter_cols(min_row=3, values_only=True))
        base = series[("baseline", profile)]
        assert list(cols[0]) == base["time_s"]
        assert list(cols[1]) == base["speed_kmh"]
        for c, name in enumerate(names):
            if name is None or c < 2:
                continue
            s = series[(name, profile)]
            assert heads[c:c + 3] == ["wheel force [N]", "wheel power [kW]",
                                      "cumulative traction energy [kWh]"]
            force, power, energy = (np.array(cols[c + j], float) for j in range(3))
            assert force.tolist() == s["force_n"]
            assert power.tolist() == s["power_kw"]
            assert energy.tolist() == s["cumulative_energy_kwh"]
            # mechanical power P = F·v (v in m/s, P in kW)
            np.testing.assert_allclose(power, force * np.array(cols[1]) / 3.6 / 1000.0,
                                       rtol=1e-12, atol=1e-12)
    # one sheet per driven profile (not for mixes)
    assert sum(1 for t in wb.sheetnames if t.startswith("Profile")) == 4


def test_energy_parts_table_equals_json(case):
    ws = case["wb"]["Energy parts"]
    rows = {(r["profile"], r["variant"]): r for r in case["json"]["rows"]}
    heads = [c.value for c in ws[1]]
    assert heads[2:6] == [f"{p} [Wh/km]" for p in ("rolling", "aero", "inertia", "grade")]
    n = 0
    for line in ws.iter_rows(min_row=2, values_only=True):
        j = rows[(line[0], line[1])]
        assert list(line[2:7]) == [j[f"{p}_energy_wh_per_km"] for p in
                                   ("rolling", "aero", "inertia", "grade", "positive")]
        n += 1
    assert n == len(rows)


# ---------------------------------------------------------------------------
# range against speed
# ---------------------------------------------------------------------------

def _range_columns(ws):
    names = [c.value for c in ws[1]]
    heads = [c.value for c in ws[2]]
    cols = list(ws.iter_cols(min_row=3, values_only=True))
    speed = np.array([v for v in cols[0] if v is not None], float)
    out = {}
    for c, name in enumerate(names):
        if name and heads[c] and heads[c].startswith("range ["):
            rng = np.array([np.nan if v is None else v for v in cols[c][:speed.size]], float)
            per = np.array([np.nan if v is None else v for v in cols[c + 1][:speed.size]],
                           float)
            out[name] = (rng, per)
    return heads, speed, out


def test_range_sheet_matches_the_powertrain_and_battery_identity(case):
    from tractive.powertrain import range_curve

    ws = case["wb"]["Range vs speed"]
    heads, speed, curves = _range_columns(ws)
    assert heads[0] == "constant speed [km/h]"
    assert set(curves) == {v.name for v in case["result"].variants}
    # range = usable battery energy / consumption per km (the definition of range):
    # 60 kWh for the baseline, 60 + 15 kWh where the pack grows
    for name, usable in (("baseline", 60.0), ("-mass", 75.0), ("@tyres", 75.0),
                         ("+roof", 60.0)):
        rng, per = curves[name]
        np.testing.assert_allclose(rng * per / 1000.0, usable, rtol=1e-12)
    # the baseline is the unmodified vehicle file: the same sweep through the public API
    ref = range_curve(load_vehicle(case["folder"] / "ev.yaml"), speed)
    np.testing.assert_array_equal(curves["baseline"][0], ref.range_km)
    # speed of greatest range with constant efficiency η and auxiliary load P on
    # F = f0 + f2·v²: c(v) = (f0 + f2 v²)/η + P/v, dc/dv = 0 → v* = (η P / (2 f2))^(1/3)
    veh = load_vehicle(case["folder"] / "ev.yaml")
    f2 = 0.5 * veh.road_load.air_density_kg_m3 * 0.60
    v_star_kmh = (0.88 * 300.0 / (2.0 * f2)) ** (1.0 / 3.0) * 3.6
    table = {ws.cell(row=r, column=c).value: ws.cell(row=r, column=c + 1).value
             for r in range(3, 10) for c in range(1, ws.max_column)
             if ws.cell(row=2, column=c).value == "Variant"}
    assert table["baseline"] == pytest.approx(v_star_kmh, abs=1e-3)


def test_range_sheet_in_us_units(tmp_path):
    # exact factors: 1 mile = 1609.344 m, 1 mph = 0.44704 m/s (NIST SP 811, Appendix B)
    text = STUDY.replace("name: workbook study", "name: us study\nunits: us")
    res = run_study(_study(tmp_path, text), draws=0, series=False)
    wb = build_workbook(res)
    heads, speed, curves = _range_columns(wb["Range vs speed"])
    assert heads[0] == "constant speed [mph]"
    assert speed[0] == pytest.approx(5.0, rel=1e-12) and speed[-1] == pytest.approx(100.0)
    rng, per = curves["baseline"]
    assert any(h == "range [mi]" for h in heads)
    # mi × Wh/mi = Wh: the product is the usable battery energy in any unit of distance
    np.testing.assert_allclose(rng * per / 1000.0, 60.0, rtol=1e-12)
    from tractive.powertrain import range_curve
    ref = range_curve(load_vehicle(tmp_path / "ev.yaml"), speed * 0.44704 * 3.6)
    np.testing.assert_allclose(rng, ref.range_km * 1000.0 / 1609.344, rtol=1e-12)
    # no series asked for: no profile sheets, and the Study sheet says so
    assert not [t for t in wb.sheetnames if t.startswith("Profile")]
    notes = [c.value for c in wb["Study"]["A"] if isinstance(c.value, str)]
    assert any("no time series" in n for n in notes)


def test_range_sheet_comes_from_the_result_alone(tmp_path):
    # the workbook draws what the study computed: changing or removing the input files
    # after the run changes nothing in it
    study = _study(tmp_path)
    res = run_study(study, draws=0, series=False)
    before = _range_columns(build_workbook(res)["Range vs speed"])
    (tmp_path / "ev.yaml").write_text(EV.replace("mass_kg: 1800", "mass_kg: 1900"),
                                      encoding="utf-8")
    study.unlink()
    after = _range_columns(build_workbook(res)["Range vs speed"])
    assert before[0] == after[0]
    np.testing.assert_array_equal(before[1], after[1])
    for name, (rng, per) in before[2].items():
        np.testing.assert_array_equal(after[2][name][0], rng)
        np.testing.assert_array_equal(after[2][name][1], per)
    # and the sheet holds exactly the result's range curves (JSON numbers)
    data = json.loads(json.dumps(res.to_dict()))
    for curve in data["range_curves"]:
        rng, per = before[2][curve["variant"]]
        ok = np.array(curve["feasible"])
        np.testing.assert_array_equal(rng[ok], np.array(curve["range_km"])[ok])
        np.testing.assert_array_equal(per[ok], np.array(curve["battery_wh_per_km"])[ok])
        assert np.all(np.isnan(rng[~ok]))


def test_range_sheet_of_a_combustion_study(tmp_path):
    # tank range = tank / fuel per km (definition): range × L/100 km / 100 = 50 L
    from tractive.powertrain import range_curve

    text = """\
name: diesel
baseline:
  vehicle: ev.yaml
modifications:
  - name: roof box
    changes: {cda_m2: +0.15, mass_kg: +20}
driving:
  profiles: [udds]
uncertainty:
  draws: 0
"""
    res = run_study(_study(tmp_path, text, DIESEL), series=False)
    ws = build_workbook(res)["Range vs speed"]
    heads, speed, curves = _range_columns(ws)
    # headers: label and unit of the metric registry
    assert heads[1:3] == ["range [km]", "fuel consumption [L/100 km]"]
    assert set(curves) == {"baseline", "roof box"}
    for rng, per in curves.values():
        ok = ~np.isnan(rng)
        assert ok.sum() > 20
        np.testing.assert_allclose(rng[ok] * per[ok] / 100.0, 50.0, rtol=1e-12)
    ref = range_curve(load_vehicle(tmp_path / "ev.yaml"), speed)
    np.testing.assert_array_equal(curves["baseline"][0],
                                  np.where(ref.feasible, ref.range_km, np.nan))
    assert np.all(curves["roof box"][0][ok] < curves["baseline"][0][ok])


def test_no_range_sheet_without_a_powertrain(tmp_path):
    plain = "name: plain car\nmass_kg: 1400\nroad_load:\n  cda_m2: 0.62\n  crr: 0.010\n"
    text = """\
name: no powertrain
baseline:
  vehicle: ev.yaml
modifications:
  - name: "-mass"
    changes: {mass_kg: -90}
driving:
  profiles: [udds]
uncertainty:
  draws: 0
"""
    res = run_study(_study(tmp_path, text, plain))
    wb = build_workbook(res)
    assert "Range vs speed" not in wb.sheetnames
    assert "Summary" in wb.sheetnames and "Energy parts" in wb.sheetnames
    assert [c.value for c in wb["Energy parts"]["B"]][1:] == ["baseline", "-mass"]


# ---------------------------------------------------------------------------
# text, sheets, charts, layout
# ---------------------------------------------------------------------------

def test_formula_like_text_is_stored_as_text(case):
    wb = case["wb"]
    found = {n: 0 for n in FORMULA_NAMES}
    for ws in wb:
        for line in ws.iter_rows():
            for cell in line:
                # no cell of the workbook is a formula (ECMA-376 18.3.1.4, section from
                # memory: type "s")
                assert cell.data_type != "f", (ws.title, cell.coordinate, cell.value)
                if cell.value in found:
                    assert cell.data_type == "s"
                    found[cell.value] += 1
    assert all(found.values()), found
    # and in the file itself: no <f> (formula) element in any worksheet
    with zipfile.ZipFile(case["path"]) as z:
        for name in z.namelist():
            if name.startswith("xl/worksheets/sheet"):
                assert b"<f>" not in z.read(name) and b"<f " not in z.read(name)


def test_sheet_names_are_valid_and_unique(case):
    names = case["wb"].sheetnames
    # Excel's rules for sheet names (from memory, not confirmed in a primary text):
    # 1..31 characters, none of \ / * ? : [ ], no leading or trailing apostrophe,
    # unique regardless of case. The forbidden characters are also those of openpyxl's
    # INVALID_TITLE_REGEX (general-purpose library).
    from openpyxl.workbook.child import INVALID_TITLE_REGEX
    for n in names:
        assert 1 <= len(n) <= 31
        assert not re.search(r"[\\/*?:\[\]]", n)
        assert not INVALID_TITLE_REGEX.search(n)
        assert not n.startswith("'") and not n.endswith("'")
    assert len({n.casefold() for n in names}) == len(names)
    assert names[:4] == ["Summary", "Attribution", "Energy parts", "Range vs speed"]
    assert names[-3:] == ["All results", "Study", "Inputs"]
    long_sheets = [n for n in names if n.startswith("Profile driver's city")]
    assert len(long_sheets) == 2 and long_sheets[0] != long_sheets[1]


@pytest.mark.parametrize("base,taken,expected", [
    ("a:b/c", (), "a_b_c"),
    ("[x]*?", (), "_x___"),
    ("'quoted'", (), "quoted"),
    ("History", (), "History sheet"),
    ("", (), "Sheet"),
    ("x" * 40, (), "x" * 31),
    ("x" * 40, ("X" * 31,), "x" * 27 + " (2)"),
    ("Summary", ("summary", "Summary (2)"), "Summary (3)"),
])
def test_sheet_title_rules(base, taken, expected):
    assert sheet_title(base, taken) == expected


def test_charts_on_the_expected_sheets(case):
    from openpyxl.chart import BarChart, ScatterChart

    wb = case["wb"]
    bars = wb["Energy parts"]._charts
    assert len(bars) == 5       # 4 profiles + 1 mix
    for ch in bars:
        assert isinstance(ch, BarChart)
        assert ch.grouping == "stacked" and ch.overlap == 100 and len(ch.series) == 4
    rng = wb["Range vs speed"]._charts
    assert len(rng) == 1 and isinstance(rng[0], ScatterChart) and len(rng[0].series) == 5
    for title in ("Profile udds", "Profile =1+1"):
        ws = wb[title]
        charts = ws._charts
        assert len(charts) == 3 and all(isinstance(c, ScatterChart) for c in charts)
        # each line points at the column whose header names its quantity
        want = ["speed", "wheel power", "cumulative traction energy"]
        for ch, quantity in zip(charts, want):
            for s in ch.series:
                ref = s.yVal.numRef.f
                col = re.search(r"!\$([A-Z]+)\$3:", ref).group(1)
                assert ws[f"{col}2"].value.startswith(quantity)
        assert len(charts[1].series) == len(case["result"].variants)
    # every series of every chart reads its own sheet (quoted name, ECMA-376 18.17.2.2, section
    # from memory)
    for ws in wb:
        for ch in ws._charts:
            for s in ch.series:
                ref = (s.yVal or s.val).numRef.f
                sheet = ref.rsplit("!", 1)[0]
                assert sheet == "'" + ws.title.replace("'", "''") + "'"


def test_frozen_header_rows_and_units_in_formats(case):
    wb = case["wb"]
    expected = {"Summary": "C5", "Attribution": "D3", "Energy parts": "C2",
                "Range vs speed": "B3", "Profile udds": "C3", "All results": "D2",
                "Study": "A2", "Inputs": "C2"}
    for title, pane in expected.items():
        assert wb[title].freeze_panes == pane, title
    ws = wb["Summary"]
    table = _summary_table(ws, case["result"])
    cells = table[("udds", "+roof")]["battery_wh_per_km"]
    assert '"Wh/km"' in cells["value"].number_format
    assert cells["change"].number_format.startswith("+")
    assert '"EUR"' in table[("udds", "+roof")]["annual_saving"]["value"].number_format
    assert cells["change %"].number_format.endswith('" %"')
    # columns are wide enough for the names and not absurdly wide
    for title in expected:
        for dim in wb[title].column_dimensions.values():
            if dim.width:
                assert 5 <= dim.width <= 80


def test_inputs_sheet_echoes_every_input(case):
    ws = case["wb"]["Inputs"]
    assert [c.value for c in ws[1]] == ["Section", "Key", "Value", "Unit", "Source", "Note"]
    got = [tuple(line) for line in ws.iter_rows(min_row=2, values_only=True)]
    want = []
    for item in case["json"]["inputs"]:
        v = item["value"]
        if isinstance(v, bool):
            v = "true" if v else "false"
        elif isinstance(v, (list, dict)):
            v = json.dumps(v, ensure_ascii=False)
        want.append(tuple(None if x == "" else x for x in
                          (item["section"], item["key"], v, item["unit"], item["source"],
                           item["note"])))
    assert got == want
    mass = [line for line in got if line[0] == "baseline" and line[1] == "mass_kg"]
    assert mass == [("baseline", "mass_kg", 1800, "kg", str(case["folder"] / "ev.yaml"), None)]
    assert '"kg"' in ws.cell(row=got.index(mass[0]) + 2, column=3).number_format


# ---------------------------------------------------------------------------
# writing
# ---------------------------------------------------------------------------

def test_written_atomically_with_usual_permissions(case, tmp_path):
    # POSIX: a new file gets mode 0o666 & ~umask (what open(..., "w") gives); a replaced
    # file keeps its own permission bits
    old = os.umask(0o027)
    (tmp_path / "sub").mkdir()      # output folders are never created (test_report_common)
    try:
        out = write_workbook(case["result"], tmp_path / "sub" / "r.xlsx")
        assert sorted(p.name for p in out.parent.iterdir()) == ["r.xlsx"]
        assert stat.S_IMODE(out.stat().st_mode) == 0o640
        os.chmod(out, 0o604)
        write_workbook(case["result"], out)
        assert stat.S_IMODE(out.stat().st_mode) == 0o604
        assert openpyxl.load_workbook(out).sheetnames[0] == "Summary"
    finally:
        os.umask(old)


@pytest.mark.parametrize("exc", [OSError("disk full"), RuntimeError("broken")])
def test_failed_write_leaves_no_temp_file_and_keeps_the_old_target(case, tmp_path,
                                                                    monkeypatch, exc):
    target = tmp_path / "r.xlsx"
    target.write_bytes(b"old content")

    from openpyxl.writer.excel import ExcelWriter

    def failing_write(self):
        self._archive.writestr("partial.xml", b"partial")
        raise exc

    monkeypatch.setattr(ExcelWriter, "write_data", failing_write)
    with pytest.raises(InputError if isinstance(exc, OSError) else RuntimeError):
        write_workbook(case["result"], target)
    assert target.read_bytes() == b"old content"
    assert [p.name for p in tmp_path.iterdir()] == ["r.xlsx"]
    fresh = tmp_path / "new.xlsx"
    with pytest.raises(InputError if isinstance(exc, OSError) else RuntimeError):
        write_workbook(case["result"], fresh)
    assert not fresh.exists() and [p.name for p in tmp_path.iterdir()] == ["r.xlsx"]


def test_refuses_to_overwrite_an_input(case):
    study = case["study"]
    before = study.read_bytes()
    with pytest.raises(InputError) as err:
        write_workbook(case["result"], study, inputs=[study])
    assert "input" in err.value.message
    assert study.read_bytes() == before
    # the same file reached through a link is refused too
    link = case["folder"] / "link.xlsx"
    link.symlink_to(study)
    try:
        with pytest.raises(InputError):
            write_workbook(case["result"], link, inputs=[study])
    finally:
        link.unlink()
    assert study.read_bytes() == before


def test_compare_command_writes_the_workbook(case, tmp_path):
    from click.testing import CliRunner

    from tractive.cli import cli

    out = tmp_path / "board.xlsx"
    res = CliRunner().invoke(cli, ["compare", str(case["study"]), "--draws", "0",
                                   "-o", str(out)])
    assert res.exit_code == 0, res.output
    wb = openpyxl.load_workbook(out)
    assert "Summary" in wb.sheetnames and "Profile udds" in wb.sheetnames


def test_converts_to_pdf_with_libreoffice(case, tmp_path):
    office = shutil.which("libreoffice") or shutil.which("soffice")
    if not office:
        pytest.skip("LibreOffice not installed: PDF conversion not checked")
    src = tmp_path / "report.xlsx"
    shutil.copy(case["path"], src)
    proc = subprocess.run([office, "--headless", "--convert-to", "pdf", "--outdir",
                           str(tmp_path), str(src)], capture_output=True, text=True,
                          timeout=300, env={**os.environ, "HOME": str(tmp_path)})
    pdf = tmp_path / "report.pdf"
    assert proc.returncode == 0, proc.stderr
    assert pdf.exists() and pdf.stat().st_size > 10000
    assert pdf.read_bytes().startswith(b"%PDF-")

