"""Hostile or careless scenarios.toml and scenarios sheets: a clean CaseError naming the scenario, the
change and the field, found when the scenarios are parsed (before any solve); never a traceback.

Checked against: what the scenario vocabulary declares (netopt.studies.changes.CHANGE_KINDS) and the
stated limits (netopt.data.limits); TOML semantics from the TOML v1.0.0 specification (toml.io), as
Python's tomllib reads it.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest
import tomllib
from casekit import make_case_dir

from netopt.api import load_case
from netopt.cli import main
from netopt.data.case import CaseError
from netopt.data.limits import MAX_FRONTIER_POINTS, MAX_SCENARIOS
from netopt.data.names import folder_name
from netopt.data.scenario_sheet import scenarios_from_sheet
from netopt.studies.scenarios import parse_scenarios, scenario_cases

DEMO = Path(__file__).resolve().parents[1] / "cases" / "brackenholt"
BIG = "1" + "0" * 400  # a TOML integer too large for a float
SC = '[[scenario]]\nname = "s"\n'


def change(kind: str, **fields: str) -> str:
    """A scenario ``s`` with one change of ``kind``; field values are TOML text."""
    return SC + f'[[scenario.change]]\nkind = "{kind}"\n' + "".join(f"{k} = {v}\n" for k, v in fields.items())


def refused(text: str) -> str:
    """The report of the CaseError that parsing ``text`` raises."""
    with pytest.raises(CaseError) as e:
        parse_scenarios(tomllib.loads(text))
    return e.value.report()


def test_the_demo_scenarios_still_parse():
    assert len(parse_scenarios(tomllib.loads((DEMO / "scenarios.toml").read_text()))) >= 5


# ------------------------------------------------------------------------ defect 3: frontier points


@pytest.mark.parametrize("points", [str(10**30), str(MAX_FRONTIER_POINTS + 1), "true", "2.5", '"5"', "1", "-3"])
def test_frontier_points_beyond_the_limit_or_not_a_whole_number_are_refused(points):
    text = refused(SC + f"frontier_points = {points}\n")
    assert "scenario 1 's': frontier_points must be a whole number from 2 to" in text
    assert str(MAX_FRONTIER_POINTS) in text


def test_frontier_points_at_the_limit_are_accepted():
    (s,) = parse_scenarios(tomllib.loads(SC + f"frontier_points = {MAX_FRONTIER_POINTS}\n"))
    assert s.frontier_points == MAX_FRONTIER_POINTS


def test_more_scenarios_than_the_limit_are_refused_before_any_is_read():
    """Each scenario is at least one solve and a run keeps every result: the count is bounded."""
    raw = [{"name": f"s{k}", "change": [{"kind": "scale_demand", "factor": 1.1}]} for k in range(MAX_SCENARIOS + 1)]
    with pytest.raises(CaseError, match=f"more than the {MAX_SCENARIOS:,}"):
        parse_scenarios(raw)
    assert len(parse_scenarios(raw[:MAX_SCENARIOS])) == MAX_SCENARIOS


# ------------------------------------------------------------------------ defect 4: numbers in changes

LANE = {"origin": '"SUP_NINGBO"', "destination": '"PLANT_POZNAN"'}
NUMERIC = [  # (kind, the other fields it needs, the numeric field)
    ("scale_demand", {}, "factor"),
    ("cap_lane", LANE, "capacity"),
    ("scale_cost", {"target": '"mode_rate"', "mode": '"road"'}, "factor"),
    ("set_capacity", {"site": '"DC_VENLO"'}, "capacity"),
    ("set_capacity", {"site": '"DC_VENLO"'}, "factor"),
    ("share_cap", {"supplier": '"SUP_NINGBO"'}, "max_share"),
    ("service_class", {"service_class": '"standard"'}, "max_days"),
    ("service_class", {"service_class": '"standard"'}, "late_cost_per_unit"),
    ("policy", {}, "max_supplier_share"),
    ("policy", {}, "carbon_price_per_tonne"),
    ("setting", {"section": '"solver"'}, "time_limit_s"),
    ("setting", {"section": '"policy"'}, "max_open_dcs"),
    ("add_dc", {"dc": '"DC_X"', "lon": "4"}, "lat"),
    ("add_dc", {"dc": '"DC_X"', "lat": "45", "lon": "4"}, "fixed_cost"),
]


@pytest.mark.parametrize(("kind", "others", "key"), NUMERIC, ids=[f"{k}-{f}" for k, _, f in NUMERIC])
@pytest.mark.parametrize("value", [BIG, "nan", "inf", "-inf"])
def test_a_number_too_large_for_a_float_or_not_finite_in_any_change_is_refused(kind, others, key, value):
    text = refused(change(kind, **others, **{key: value}))
    assert f"scenario 1 's', change 1 ({kind}): {key}" in text
    assert ("too large" in text) if value == BIG else ("finite" in text)


@pytest.mark.parametrize(
    ("kind", "fields", "says"),
    [
        ("scale_demand", {"factor": "-1"}, "factor must be ≥ 0"),
        ("scale_demand", {"factor": "true"}, "factor must be a number, not True"),
        ("scale_demand", {"factor": '"2"'}, "factor must be a number, not '2'"),
        ("cap_lane", {**LANE, "capacity": "-5"}, "capacity must be ≥ 0"),
        ("cap_lane", {**LANE, "capacity": "true"}, "capacity must be a number"),
        ("share_cap", {"supplier": '"SUP_NINGBO"', "max_share": "1.5"}, "max_share must be ≤ 1"),
        ("scale_cost", {"target": '"mode_rate"', "mode": '"road"', "factor": "-0.5"}, "factor must be ≥ 0"),
    ],
)
def test_negative_boolean_or_quoted_numbers_are_refused_where_they_mean_nothing(kind, fields, says):
    assert f"change 1 ({kind}): {says}" in refused(change(kind, **fields))


# ------------------------------------------------------------------------ defect 4: shapes and fields

HOSTILE = {
    "change = [1, 2]": (SC + "change = [1, 2]\n", "scenario 1 's', change 2: a change must be a table"),
    "change = 5": (SC + "change = 5\n", "scenario 1 's': change must be tables written as [[scenario.change]]"),
    "change = 'site_out'": (SC + 'change = "site_out"\n', "change must be tables written as [[scenario.change]]"),
    "change = [[1]]": (SC + "change = [[1]]\n", "scenario 1 's', change 1: a change must be a table"),
    "unknown kind": (change("teleport"), "change 1: unknown kind 'teleport' (one of: add_dc"),
    "kind a number": (change("x").replace('"x"', "5"), "change 1: unknown kind 5"),
    "kind missing": (SC + '[[scenario.change]]\nsite = "DC_VENLO"\n', "change 1: kind is missing"),
    "site missing": (change("site_out"), "change 1 (site_out): site is required"),
    "capacity missing": (change("cap_lane", **LANE), "change 1 (cap_lane): capacity is required"),
    "site a list": (change("site_out", site='["DC_VENLO"]'), "site must be text (a code), not ['DC_VENLO']"),
    "origin a table": (change("close_lane", origin="{a = 1}", destination='"X"'), "origin must be text (a code)"),
    "to a list": (change("force_dc", dc='"DC_VENLO"', to='["open"]'), "to must be one of open, closed, free"),
    "target a list": (change("scale_cost", target='["mode_rate"]', factor="2"), "target must be one of mode_rate"),
    "section a list": (change("setting", section='["policy"]'), "section must be text (a code)"),
    "unknown field": (change("site_out", site='"DC_VENLO"', bogus="1"), "change 1 (site_out): unknown field 'bogus'"),
    "a field typo": (change("set_capacity", site='"DC_VENLO"', capcity="5"), "unknown field 'capcity'; did you mean"),
    "a setting a table": (change("policy", carbon_price_per_tonne="{a = 1}"), "carbon_price_per_tonne must be text"),
    "name a list": (SC.replace('"s"', '["a"]'), "scenario 1: name must be text in quotes, not ['a']"),
    "name a number": (SC.replace('"s"', "5"), "scenario 1: name must be text in quotes, not 5"),
    "name missing": ("[[scenario]]\ndescription = 'x'\n", "scenario 1: every scenario needs a name"),
    "name blank": (SC.replace('"s"', '"  "'), "scenario 1: name is empty"),
    "based_on a list": (SC + 'based_on = ["b"]\n', "scenario 1 's': based_on must be text in quotes"),
    "resolve a list": (SC + 'resolve = ["hold"]\n', "scenario 1 's': resolve must be text in quotes"),
    "resolve unknown": (SC + 'resolve = "maybe"\n', "resolve must be one of redesign, hold, both, not 'maybe'"),
    "description a table": (SC + "description = {x = 1}\n", "scenario 1 's': description must be text in quotes"),
    "unknown entry": (SC + "frontier_point = 5\n", "unknown entry 'frontier_point'; did you mean 'frontier_points'?"),
    "dots only": (SC.replace('"s"', '"..."'), "name '...' has no letter or digit, so it gives no folder name"),
    "NUL": (SC.replace('"s"', '"a\\u0000b"'), "name 'a\\x00b' holds the invisible or control character U+0000"),
    "newline": (SC.replace('"s"', '"a\\nb"'), "control character U+000A"),
    "bidi override": (SC.replace('"s"', '"a\\u202eb"'), "control character U+202E"),
    "too long": (SC.replace('"s"', '"' + "x" * 101 + '"'), "has 101 characters, more than the 100 allowed"),
    "comma": (SC.replace('"s"', '"a,b"'), "holds a comma"),
    "base": (SC.replace('"s"', '"Base"'), "the name is used twice or is 'base'"),
    "twice": (SC + SC, "scenario 2 's': the name is used twice or is 'base' (scenario 1 has it too)"),
}


@pytest.mark.parametrize("case", list(HOSTILE), ids=list(HOSTILE))
def test_hostile_scenarios_are_refused_naming_scenario_change_and_field(case):
    text, says = HOSTILE[case]
    assert says in refused(text)


def test_every_problem_of_every_scenario_at_once():
    text = refused(change("site_out", site="[1]") + SC.replace('"s"', '"t"') + f"frontier_points = {BIG}\n")
    assert "scenario 1 's', change 1 (site_out)" in text and "scenario 2 't': frontier_points" in text


def test_a_single_change_table_counts_as_one_change():
    """``[scenario.change]`` (one table, not an array) is accepted as that scenario's one change."""
    (s,) = parse_scenarios(tomllib.loads(SC + '[scenario.change]\nkind = "site_out"\nsite = "DC_VENLO"\n'))
    assert s.changes == [{"kind": "site_out", "site": "DC_VENLO"}]


@pytest.mark.parametrize("raw", [5, "x", [5], [["a"]], [{"name": "a"}, "b"]])
def test_parse_refuses_anything_but_a_list_of_tables(raw):
    with pytest.raises(CaseError) as e:
        parse_scenarios(raw)
    assert "[[scenario]]" in e.value.report()


# ------------------------------------------------------------------------ defect 7: folder names

CLASHES = {
    "slash and underscore": (["a/b", "a_b"], "scenarios/a_b"),
    "suffix and underscores": (["lost [hold]", "lost__hold"], "scenarios/lost__hold"),
    "case only": (["Port", "port"], "scenarios/port"),
    "a named hold row": (["x [hold]", ("x", "both")], "scenarios/x__hold"),
    "a named priced row": (["x [lost demand priced]", "x"], "scenarios/x__lost_demand_priced"),
    "frontier files": ([("y", "both"), ("Y", "hold")], "frontier_Y"),
}


@pytest.mark.parametrize("case", list(CLASHES), ids=list(CLASHES))
def test_names_whose_results_would_share_a_folder_are_refused_naming_both(case):
    names, folder = CLASHES[case]
    toml = ""
    for n in names:
        name, resolve = n if isinstance(n, tuple) else (n, "redesign")
        toml += f'[[scenario]]\nname = "{name}"\nresolve = "{resolve}"\n'
    text = refused(toml)
    first, second = (n if isinstance(n, str) else n[0] for n in names)
    assert f"scenarios '{first}' and '{second}'" in text and f"written to '{folder}'" in text


def test_distinct_folders_are_accepted():
    toml = "".join(f'[[scenario]]\nname = "{n}"\nresolve = "both"\n' for n in ("a-b", "a_b", "ab", "CON"))
    assert [s.name for s in parse_scenarios(tomllib.loads(toml))] == ["a-b", "a_b", "ab", "CON"]


# ------------------------------------------------------------------------ the workbook's scenarios sheet


def sheet(rows: list[dict]) -> pd.DataFrame:
    return pd.DataFrame(rows, index=range(2, 2 + len(rows))).fillna("")


@pytest.mark.parametrize(
    ("name", "says"),
    [("a\x00b", "U+0000"), ("...", "no letter or digit"), ("x" * 101, "101 characters"), ("a,b", "comma")],
)
def test_the_scenarios_sheet_refuses_bad_names_naming_the_row(name, says):
    rows = [{"scenario": "ok", "kind": ""}, {"scenario": name, "kind": "site_out", "site": "DC_VENLO"}]
    _, problems = scenarios_from_sheet(sheet(rows))
    (p,) = problems
    assert (p.table, p.row, p.column) == ("scenarios", 3, "scenario") and says in p.message


def test_the_scenarios_sheet_refuses_a_bad_based_on():
    _, problems = scenarios_from_sheet(sheet([{"scenario": "a", "based_on": "b\tc", "kind": ""}]))
    assert [(p.row, p.column) for p in problems] == [(2, "based_on")] and "U+0009" in problems[0].message


def test_a_huge_number_in_the_sheet_is_refused_when_parsed():
    entries, problems = scenarios_from_sheet(sheet([{"scenario": "a", "kind": "scale_demand", "factor": BIG}]))
    assert not problems
    with pytest.raises(CaseError) as e:
        parse_scenarios(entries)
    assert "change 1 (scale_demand): factor is a whole number of about 401 digits, too large" in e.value.report()


# ------------------------------------------------------------------------ through the CLI (no solve)


@pytest.mark.parametrize(
    ("verb", "toml", "says"),
    [
        ("check", SC + "change = [1, 2]\n", "a change must be a table"),
        ("check", change("scale_demand", factor=BIG), "factor is a whole number of about 401 digits"),
        ("run", SC.replace('"s"', '"a/b"') + SC.replace('"s"', '"a_b"'), "scenarios 'a/b' and 'a_b'"),
        ("run", SC + f"frontier_points = {10**30}\n", "frontier_points must be a whole number"),
    ],
)
def test_the_cli_exits_2_before_solving_with_no_traceback(tmp_path, capsys, verb, toml, says):
    folder = make_case_dir(tmp_path, scenarios=toml)
    argv = [verb, str(folder)] + (["--out", str(tmp_path / "out")] if verb == "run" else [])
    with pytest.raises(SystemExit) as e:
        main(argv)
    err = capsys.readouterr().err
    assert e.value.code == 2 and says in err and "Traceback" not in err
    assert not (tmp_path / "out").exists()


# ------------------------------------------------------------------------ found by hostile input (item 6)

ADD = {"dc": '"DC_X"', "lat": "45", "lon": "4"}


@pytest.mark.parametrize(
    ("fields", "says"),
    [
        ({**ADD, "region": "[1]"}, "region must be text (a code), not [1]"),
        ({**ADD, "capacity": "true"}, "capacity must be a number, not True"),
        ({**ADD, "status": '"maybe"'}, "status must be one of existing, candidate"),
        ({"dc": '"DC_X"', "lat": "45"}, "lon is required"),
    ],
)
def test_an_added_dc_s_fields_are_typed_as_the_dcs_table_declares(fields, says):
    """add_dc took a list as a region and true as a capacity (both became cells of the new DC row)."""
    assert f"change 1 (add_dc): {says}" in refused(change("add_dc", **fields))


def test_set_capacity_refuses_both_capacity_and_factor_and_a_factor_on_an_unlimited_capacity(tmp_path):
    """capacity and factor together silently dropped the factor; factor 0 on a blank (unlimited) capacity
    gave NaN, read as unlimited again."""
    toml = change("set_capacity", site='"ORE-N"', factor="0") + change(
        "set_capacity", site='"DC-FRA"', capacity="1", factor="2"
    ).replace('"s"', '"t"')
    case = load_case(make_case_dir(tmp_path, scenarios=toml))
    with pytest.raises(CaseError) as e:
        scenario_cases(case, parse_scenarios(case.scenarios))
    text = e.value.report()
    assert "scenario 's', change 1 (set_capacity): 'ORE-N' has no capacity limit" in text
    assert "scenario 't', change 1 (set_capacity): give capacity or factor, not both" in text


def test_a_long_based_on_chain_parses_and_a_long_loop_is_named_briefly():
    n = MAX_SCENARIOS  # the longest chain a case may hold
    raw = [{"name": f"s{i}", "based_on": f"s{i - 1}" if i else ""} for i in range(n)]
    assert len(parse_scenarios(raw)) == n
    raw[0]["based_on"] = f"s{n - 1}"
    with pytest.raises(CaseError) as e:
        parse_scenarios(raw)
    (p,) = e.value.problems
    assert f"based_on forms a loop (s0 → s{n - 1} → s{n - 2} → s{n - 3} → … {n - 4} more → s0)" in p.message


def test_a_sheet_code_with_leading_zeros_stays_text():
    entries, _ = scenarios_from_sheet(sheet([{"scenario": "a", "kind": "site_out", "site": "007"}]))
    assert entries[0]["change"] == [{"kind": "site_out", "site": "007"}]


# ------------------------------------------------------------------------ the folder-name mapping itself


@pytest.mark.parametrize(
    ("label", "folder"),
    [
        ("lane_out_ningbo_poznan", "lane_out_ningbo_poznan"),
        ("a/b", "a_b"),
        ("lost [hold]", "lost__hold"),
        ("x [hold, lost demand priced]", "x__hold__lost_demand_priced"),
        ("...", ""),
        ("CON", "CON_"),
        ("nul", "nul_"),
        ("COM1", "COM1_"),
        ("CON [hold]", "CON__hold"),
        ("Cafe\u0301", "Caf\u00e9"),  # NFD e + combining accent → the NFC é a macOS folder matches
    ],
)
def test_folder_name_keeps_letters_digits_dash_underscore_and_avoids_windows_device_names(label, folder):
    """Windows device names (CON, PRN, AUX, NUL, COM1-9, LPT1-9) cannot be folders there (common
    practice, no source): they get a trailing underscore."""
    assert folder_name(label) == folder
