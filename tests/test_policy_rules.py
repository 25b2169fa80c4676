"""Policies: how values are looked up, inherited, overridden per capacitor, and refused when malformed."""

from __future__ import annotations

import pytest

from derate.errors import DataError
from derate.policy import Override, Policy, Sourced, _sourced, builtin_names, load_policy


def _write(tmp_path, name: str, text: str):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_lookup_falls_back_to_default_and_own_does_not():
    pol = Policy("p", technologies={"default": {"voltage_factor": Sourced(0.5, "d")},
                                    "ceramic-class1": {"surge_factor": Sourced(0.9, "c")}})
    assert pol.get("ceramic-class1", "surge_factor").value == 0.9
    assert pol.get("ceramic-class1", "voltage_factor").value == 0.5  # from default
    assert pol.own("ceramic-class1", "voltage_factor") is None and pol.own("ceramic-class1", "surge_factor").value == 0.9
    assert pol.get(None, "voltage_factor").value == 0.5  # no technology: 'other', then default
    assert pol.value("ceramic-class1", "nothing", 7) == 7 and pol.value("ceramic-class1", "nothing") is None
    assert pol.own(None, "voltage_factor") is None


def test_required_checks():
    pol = Policy("p", technologies={
        "ceramic-class2": {"required": Sourced(("voltage", "dc-bias"), "x")},
        "aluminum-electrolytic": {"required": Sourced("all", "x")},
        "default": {"required": Sourced(("voltage",), "x"), "hotspot_required_above_a": Sourced(0.3, "x")}})
    assert pol.required("ceramic-class2", "dc-bias") and not pol.required("ceramic-class2", "ripple")
    assert pol.required("ceramic-class2", "ac-voltage")  # the voltage check of a part rated in AC volts
    assert pol.required("aluminum-electrolytic", "life")
    assert pol.required("film-polyester", "voltage") and not pol.required("film-polyester", "surge")
    # hot spot and self-heating become required above the ripple threshold (0.3 A), not at it
    assert not pol.required("film-polyester", "hotspot", 0.3) and pol.required("film-polyester", "hotspot", 0.31)
    assert pol.required("film-polyester", "self-heating", 1.0) and not pol.required("film-polyester", "life", 1.0)
    none = Policy("p", technologies={"default": {"required": Sourced(("voltage",), "x")}})
    assert not none.required("film-polyester", "hotspot", 5.0)  # no threshold: never required by current
    assert Policy("p").required("anything", "life")  # no list at all: every check is required


def test_policy_level_values():
    pol = Policy("p", near_limit_pct=Sourced(15.0, "x"), typical_data=Sourced("refused", "x"))
    assert pol.near_ratio == pytest.approx(0.85) and not pol.accepts_typical
    assert Policy("p").near_ratio == pytest.approx(0.9) and Policy("p").accepts_typical
    assert Policy("p").unrated_severity == "error"


def test_sourced_values_and_their_status():
    curve = _sourced({"value": [[85, 1.0], [25, 0.5]], "source": "a datasheet"})
    assert curve.value == ((25.0, 0.5), (85.0, 1.0)) and curve.status == "unverified"  # sorted; no status: memory
    listed = _sourced({"value": ["voltage", "surge"], "source": "common practice: x"})
    assert listed.value == ("voltage", "surge") and listed.status == "practice"
    told = _sourced({"value": 0.5, "source": "KEMET Q&A", "status": "verified"})
    assert told.value == 0.5 and told.status == "verified"
    assert told.provenance() == {"source": "KEMET Q&A", "status": "verified"}
    assert _sourced({"value": [], "source": "x"}).value == ()


def test_overrides_per_capacitor_and_net():
    base = Policy("p", technologies={"aluminum-electrolytic": {"voltage_factor": Sourced(0.8, "p"),
                                                               "surge_factor": Sourced(0.9, "p")}})
    by_ref = Override(("c3", "x*.c1"), (), {"aluminum-electrolytic": {"voltage_factor": Sourced(0.7, "team")}},
                      "bulk rule", "team.yaml:4")
    by_net = Override((), ("BULK",), {"aluminum-electrolytic": {"surge_factor": Sourced(0.8, "team")}}, "", "team.yaml:9")
    pol = Policy("p", technologies=base.technologies, overrides=(by_ref, by_net))
    assert pol.for_capacitor("C9", ("out", "0")) is pol  # no override names it: the policy itself
    c3 = pol.for_capacitor("C3", ("out", "0"))
    assert c3.value("aluminum-electrolytic", "voltage_factor") == 0.7
    assert c3.value("aluminum-electrolytic", "surge_factor") == 0.9 and c3.applied == ("bulk rule",)
    sub = pol.for_capacitor("X2.C1", ("bulk", "0"))
    assert sub.value("aluminum-electrolytic", "voltage_factor") == 0.7
    assert sub.value("aluminum-electrolytic", "surge_factor") == 0.8
    assert sub.applied == ("bulk rule", "team.yaml:9")  # an override without a description is named by its place
    assert pol.value("aluminum-electrolytic", "voltage_factor") == 0.8  # the policy itself is unchanged
    assert pol.for_capacitor("C_C3", ("x",), ("c_c3", "c3")).applied == ("bulk rule",)  # a BOM designator alias
    # an override for a technology the policy does not list adds it
    new = Override(("c5",), (), {"ceramic-class2": {"voltage_factor": Sourced(0.5, "t")}}, "", "t.yaml:1")
    assert Policy("p", overrides=(new,)).for_capacitor("C5", ()).value("ceramic-class2", "voltage_factor") == 0.5


def test_loading_extends_and_overrides(tmp_path):
    _write(tmp_path, "team.yaml", """name: team
extends: commercial
title: Team rules
near_limit_pct: {value: 5, source: team decision, status: practice}
technologies:
  aluminum-electrolytic:
    voltage_factor: {value: 0.75, source: team rule TR-1}
overrides:
  - capacitors: [C3]
    description: bulk
    technologies:
      aluminum-electrolytic:
        voltage_factor: {value: 0.7, source: team rule TR-7}
""")
    pol = load_policy("team.yaml", tmp_path)
    assert pol.name == "team" and pol.title == "Team rules" and pol.chain == ("commercial", "team")
    assert pol.near_ratio == pytest.approx(0.95)
    assert pol.value("aluminum-electrolytic", "voltage_factor") == 0.75
    assert pol.value("aluminum-electrolytic", "reverse_max_v") == 1.5  # inherited from commercial
    assert pol.description == load_policy("commercial").description  # not given: inherited
    assert len(pol.files) == 2 and pol.files[-1].endswith("team.yaml")
    (o,) = pol.overrides
    assert o.capacitors == ("C3",) and o.nets == () and o.description == "bulk" and o.where.endswith("team.yaml:9")
    assert pol.for_capacitor("C3", ()).value("aluminum-electrolytic", "voltage_factor") == 0.7
    _write(tmp_path, "deeper.yaml", "name: deeper\nextends: team.yaml\noverrides:\n  - nets: bulk\n"
                                    "    technologies: {default: {surge_factor: {value: 0.5, source: team rule}}}\n")
    deeper = load_policy("deeper.yaml", tmp_path)
    assert len(deeper.overrides) == 2 and deeper.overrides[1].nets == ("bulk",)  # inherited ones first
    assert deeper.title == "Team rules" and deeper.near_ratio == pytest.approx(0.95)


@pytest.mark.parametrize("text, message, key", [
    ("name: x\ntechnologies:\n  default:\n    category_voltage: {value: [[85, 1.0], [85, 0.9]], source: a datasheet}\n",
     "two rows for the same temperature", "technologies.default.category_voltage"),
    ("name: x\ntechnologies:\n  default:\n    voltage_factor_curve: {value: [[25, 0.8], [85, 0.9]], source: a datasheet}\n",
     "must not rise with temperature", "technologies.default.voltage_factor_curve"),
    ("name: x\ntechnologies:\n  default:\n    reverse_factor_curve: {value: [[25, 0.1], [85, 0.0]], source: a datasheet}\n",
     "expected a number above 0", "technologies.default.reverse_factor_curve.value[1][1]"),
])
def test_malformed_curves_are_named(tmp_path, text, message, key):
    _write(tmp_path, "bad.yaml", text)
    with pytest.raises(DataError) as err:
        load_policy("bad.yaml", tmp_path)
    assert message in err.value.message and err.value.key == key


def test_policy_files_that_are_not_policies(tmp_path):
    _write(tmp_path, "list.yaml", "- a\n")
    with pytest.raises(DataError, match="expected a policy mapping"):
        load_policy("list.yaml", tmp_path)
    with pytest.raises(DataError, match="no built-in policy named 'nonesuch'"):
        load_policy("nonesuch")
    _write(tmp_path, "a.yaml", "name: a\nextends: b.yaml\n")
    _write(tmp_path, "b.yaml", "name: b\nextends: a.yaml\n")
    with pytest.raises(DataError, match="cycle"):
        load_policy("a.yaml", tmp_path)
    _write(tmp_path, "c.yaml", "name: c\nextends: nonesuch\n")
    with pytest.raises(DataError) as err:
        load_policy("c.yaml", tmp_path)
    assert "no built-in policy named 'nonesuch'" in err.value.message and err.value.key == "extends"
    assert set(builtin_names()) >= {"commercial", "industrial", "spaceflight"}


def test_every_policy_level_field_is_read_and_inherited(tmp_path):
    _write(tmp_path, "org.yml", """name: org
extends: industrial
title: Org
description: Our boards
near_limit_pct: {value: 12, source: org decision, status: practice}
unrated_severity: warning
typical_data: {value: refused, source: org decision, status: practice}
refuse_unverified: {value: true, source: org sign-off rule, status: practice}
mission_life_h: {value: 50000, source: org mission, status: practice}
""")
    org = load_policy("org.yml", tmp_path)  # a '.yml' name is a file too
    assert (org.title, org.description, org.unrated_severity) == ("Org", "Our boards", "warning")
    assert org.near_ratio == pytest.approx(0.88) and not org.accepts_typical
    assert org.refuse_unverified.value is True and org.refuse_unverified.source == "org sign-off rule"
    assert org.mission_life_h.value == 50000 and org.mission_life_h.status == "practice"
    _write(tmp_path, "child.yaml", "name: child\nextends: org.yml\n")
    child = load_policy("child.yaml", tmp_path)
    assert (child.title, child.description, child.unrated_severity) == ("Org", "Our boards", "warning")
    assert child.refuse_unverified.value is True and child.mission_life_h.value == 50000
    assert not child.accepts_typical and child.near_ratio == pytest.approx(0.88)
    assert child.chain == ("commercial", "industrial", "org", "child")
    plain = load_policy("industrial")
    assert plain.mission_life_h is None and plain.refuse_unverified.value is False and plain.accepts_typical


def test_errors_name_the_file_and_the_extends_line(tmp_path):
    bad = _write(tmp_path, "bad.yaml", "- not a mapping\n")
    with pytest.raises(DataError) as err:
        load_policy("bad.yaml", tmp_path)
    assert err.value.file == str(bad)
    a = _write(tmp_path, "a.yaml", "name: a\nextends: b.yaml\n")
    _write(tmp_path, "b.yaml", "name: b\nextends: a.yaml\n")
    with pytest.raises(DataError) as err:
        load_policy("a.yaml", tmp_path)
    assert err.value.file in (str(a), str(a.resolve()))  # the file that closes the cycle
    assert "a.yaml -> " in err.value.message and err.value.message.count(" -> ") == 2
    # a policy extending a file outside its folder's root is refused, naming the extends line
    outside = tmp_path / "outside"
    outside.mkdir()
    _write(outside, "far.yaml", "name: far\n")
    inner = tmp_path / "proj"
    inner.mkdir()
    _write(inner, "p.yaml", "name: p\ntitle: t\nextends: ../outside/far.yaml\n")
    with pytest.raises(DataError) as err:
        load_policy("p.yaml", inner)
    assert "p.yaml:3" in (err.value.file or "") and err.value.key == "extends"
    _write(tmp_path, "o.yaml", "name: o\noverrides:\n  - capacitors: C1\n    technologies: {default: {voltage_factor: "
                               "{value: 0.5, source: team rule}}}\n")
    (o,) = load_policy("o.yaml", tmp_path).overrides
    assert o.description == "" and o.where.endswith("o.yaml:3")


def test_a_part_without_technology_is_judged_by_the_other_entry():
    pol = Policy("p", technologies={"other": {"voltage_factor": Sourced(0.5, "team rule 9")},
                                    "default": {"voltage_factor": Sourced(0.8, "team rule 1")}})
    assert pol.value(None, "voltage_factor") == 0.5 and pol.own(None, "voltage_factor").source == "team rule 9"
    assert pol.value("film-polyester", "voltage_factor") == 0.8 and pol.own("film-polyester", "voltage_factor") is None


def test_hot_spot_required_above_a_ripple_current_of_the_technology():
    """'hotspot_required_above_a: 0.5' for polymer parts: the hot spot is required above 0.5 A of ripple,
    not at the default of no ripple, and the threshold is the technology's own."""
    pol = Policy("p", technologies={"aluminum-polymer": {"required": Sourced(["voltage"], "team"),
                                                         "hotspot_required_above_a": Sourced(0.5, "team")}})
    assert not pol.required("aluminum-polymer", "hotspot")
    assert not pol.required("aluminum-polymer", "hotspot", ripple_a=0.4)
    assert pol.required("aluminum-polymer", "self-heating", ripple_a=0.6)
    assert pol.required("aluminum-polymer", "voltage") and not pol.required("aluminum-polymer", "life")


def test_a_missing_policy_file_is_named_as_a_file_not_a_built_in(tmp_path):
    for name in ("team.yaml", "team.yml"):
        with pytest.raises(DataError) as err:
            load_policy(name, tmp_path)
        assert "built-in" not in str(err.value) and name in str(err.value)


def test_a_flat_derating_curve_is_allowed_a_rising_one_is_not(tmp_path):
    curve = "technologies:\n  tantalum-mno2:\n    voltage_factor_curve: {{value: [[25, 0.5], [85, {y}]], source: team}}\n"
    assert load_policy(str(_write(tmp_path, "flat.yaml", "name: flat\n" + curve.format(y=0.5))))
    with pytest.raises(DataError, match="must not rise"):
        load_policy(str(_write(tmp_path, "rise.yaml", "name: rise\n" + curve.format(y=0.50001))))
