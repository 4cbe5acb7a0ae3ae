"""diff_values, describe and check_transitions on invented report data."""

from __future__ import annotations

import math

import pytest

from reportgen.diffing import Change, Transition, check_transitions, describe, diff_values, format_value


def test_equal_documents_have_no_changes():
    doc = {"loads": [{"name": "Mixer", "p_w": 59500.0}], "pf": 0.95, "ok": True, "note": None}
    assert diff_values(doc, {"note": None, "ok": True, "pf": 0.95, "loads": [{"p_w": 59500.0, "name": "Mixer"}]}) == []


def test_lists_matched_by_name():
    a = {"loads": [{"name": "Mixer", "p_w": 59500, "q_var": 40000},
                   {"name": "Pump", "p_w": 15000, "q_var": 9000}]}
    # a load inserted at the top, one changed, one removed
    b = {"loads": [{"name": "Compressor", "p_w": 30000, "q_var": 22000},
                   {"name": "Mixer", "p_w": 61200, "q_var": 40000}]}
    ch = diff_values(a, b)
    assert ch == [
        Change("loads[Mixer].p_w", "changed", 59500, 61200),
        Change("loads[Pump]", "removed", {"name": "Pump", "p_w": 15000, "q_var": 9000}, None),
        Change("loads[Compressor]", "added", None, {"name": "Compressor", "p_w": 30000, "q_var": 22000}),
    ]
    assert describe(ch[0]) == "loads[Mixer].p_w: 59500 → 61200"
    assert describe(ch[1]).startswith("loads[Pump]: removed (was {")
    assert describe(ch[2]).startswith("loads[Compressor]: added (")


def test_lists_matched_by_id_then_index():
    a = [{"id": 1, "v": 1.0}, {"id": 2, "v": 2.0}]
    b = [{"id": 2, "v": 2.5}, {"id": 1, "v": 1.0}]
    assert diff_values(a, b, "steps") == [Change("steps[2].v", "changed", 2.0, 2.5)]
    # duplicate names -> by index
    a = [{"name": "x", "v": 1}, {"name": "x", "v": 2}]
    b = [{"name": "x", "v": 1}, {"name": "x", "v": 3}]
    assert diff_values(a, b, "l") == [Change("l[1].v", "changed", 2, 3)]
    # plain lists by index, with length changes
    assert diff_values([1, 2, 3], [1, 5], "h") == [Change("h[1]", "changed", 2, 5), Change("h[2]", "removed", 3, None)]
    assert diff_values([], [7], "h") == [Change("h[0]", "added", None, 7)]


def test_numeric_tolerance_is_relative_1e9():
    base = 150000.0
    assert diff_values({"q_var": base}, {"q_var": base * (1 + 5e-10)}) == []
    assert diff_values({"q_var": base}, {"q_var": base * (1 + 5e-9)}) != []
    assert diff_values({"x": 1}, {"x": 1.0}) == []  # int vs float of equal value
    assert diff_values({"x": float("nan")}, {"x": float("nan")}) == []
    assert diff_values({"x": 0.0}, {"x": 1e-12}) == [Change("x", "changed", 0.0, 1e-12)]
    assert diff_values({"x": 0.0}, {"x": 1e-12}, abs_tol=1e-9) == []
    assert diff_values({"x": math.inf}, {"x": math.inf}) == []
    big = 2**60
    assert diff_values({"n": big}, {"n": big + 1}) != []  # ints compared exactly


def test_types_and_nested_paths():
    a = {"flag": True, "n": 1, "s": "a", "d": {"x": {"y": 1}}, "odd key.a": 1, "l": [1]}
    b = {"flag": 1, "n": "1", "s": "b", "d": {"x": {"y": 2}, "z": None}, "odd key.a": 2, "l": {"0": 1}}
    ch = diff_values(a, b)
    got = {c.path: (c.kind, c.before, c.after) for c in ch}
    assert got == {
        "flag": ("changed", True, 1),  # bool is not a number
        "n": ("changed", 1, "1"),
        "s": ("changed", "a", "b"),
        "d.x.y": ("changed", 1, 2),
        "d.z": ("added", None, None),
        '["odd key.a"]': ("changed", 1, 2),
        "l": ("changed", [1], {"0": 1}),
    }
    assert diff_values(1, 2) == [Change("", "changed", 1, 2)]
    assert describe(Change("", "changed", 1, 2)) == "(whole document): 1 → 2"


def test_names_needing_quotes():
    a = {"loads": [{"name": "Line [3]", "p_w": 1.0}]}
    b = {"loads": [{"name": "Line [3]", "p_w": 2.0}]}
    assert diff_values(a, b)[0].path == 'loads["Line [3]"].p_w'
    a = {"loads": [{"name": "Air compressor", "p_w": 1.0}]}
    b = {"loads": [{"name": "Air compressor", "p_w": 2.0}]}
    assert describe(diff_values(a, b)[0]) == "loads[Air compressor].p_w: 1 → 2"


def test_format_value():
    assert format_value(59500.0) == "59500"
    assert format_value(0.1) == "0.1"
    assert format_value(1234567.891) == "1234567.891"
    assert format_value(1e20) == "1e+20"
    assert format_value(None) == "none"
    assert format_value(False) == "false"
    assert format_value("") == '""'
    assert format_value({"b": 1, "a": [1, 2]}) == '{"a": [1, 2], "b": 1}'
    assert len(format_value({"k": "x" * 200})) == 60


def test_check_transitions_forms_and_kinds():
    a = {"voltage_rise": "pass", "resonance": "warn", "thd_v": "pass", "old_check": "pass"}
    b = [{"name": "voltage_rise", "status": "fail"}, {"name": "resonance", "status": "pass"},
         {"name": "thd_v", "status": "pass"}, {"name": "switching_transient", "status": "warn"}]
    t = check_transitions(a, b)
    assert [str(x) for x in t] == ["voltage_rise: pass → fail", "resonance: warn → pass",
                                   "old_check: pass → absent", "switching_transient: absent → warn"]
    assert [x.kind for x in t] == ["worse", "better", "removed", "added"]
    nested = {"voltage_rise": {"status": "pass", "value": 1.02}}
    assert check_transitions(nested, {"voltage_rise": {"status": "pass", "value": 1.03}}) == []
    assert check_transitions([{"id": "a", "status": "warn"}], {"a": "bogus"})[0].kind == "changed"
    assert check_transitions(None, {}) == []
    with pytest.raises(ValueError):
        check_transitions([{"status": "pass"}], [])
    assert Transition("x", "pass", "warn").as_dict() == {"name": "x", "before": "pass", "after": "warn",
                                                         "kind": "worse"}


def test_diff_reports_separates_checks_and_ignores_build():
    from reportgen.diffing import diff_reports

    a = {"build": {"version": "0.1.0"}, "correction": {"q_installed_var": 150000.0, "pf_after": 0.951},
         "checks": [{"id": "voltage_rise", "status": "pass", "message": "rise 1.1 %"}]}
    b = {"build": {"version": "0.2.0"}, "correction": {"q_installed_var": 175000.0, "pf_after": 0.951},
         "checks": [{"id": "voltage_rise", "status": "warn", "message": "rise 3.2 %"}]}
    d = diff_reports(a, b, ignore=["build"])
    assert d.lines() == ["voltage_rise: pass → warn", "correction.q_installed_var: 150000 → 175000"]
    assert not d.empty
    assert diff_reports(a, a).empty
    assert d.as_dict()["transitions"][0]["kind"] == "worse"
