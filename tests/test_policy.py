"""Built-in policies: every value equals the table it cites, and unverified values say so.

REFERENCE transcribes, per value, the published figure and the document it comes from (NASA
EEE-INST-002 capacitor derating; RADC-TR-84-254 Rome Laboratory derating guidelines; IPC-9592;
MIL-PRF-55365-style tantalum datasheets; capacitor manufacturers' notes).  ``verified`` False means
the figure was not checked against the original text here: the policy's source must then say
"from memory".  Values marked "common practice" have no published source and must say so.
"""

from __future__ import annotations

import pytest

from derate.errors import DataError
from derate.policy import builtin_names, load_policy

M = "unverified"  # from memory: the source must say so
V = "verified"  # read in the primary text (per the project's reference facts, second round)
S = "secondary"  # confirmed only in a secondary or another maker's source
CP = "practice"  # common practice: the source must say so

# (policy, technology, key): (value, document keyword in the source, verified)
REFERENCE = {
    # which checks must be judged, and the ripple above which the hot spot must (common practice)
    ("commercial", "default", "required"): (('voltage',), "common practice", CP),
    ("commercial", "default", "hotspot_required_above_a"): (1.0, "common practice", CP),
    ("commercial", "ceramic-class2", "required"): (('voltage', 'dc-bias'), "common practice", CP),
    ("commercial", "tantalum-mno2", "required"): (('voltage', 'reverse', 'surge'), "common practice", CP),
    ("commercial", "tantalum-polymer", "required"): (('voltage', 'reverse'), "common practice", CP),
    ("commercial", "aluminum-electrolytic", "required"): (('voltage', 'reverse', 'ripple', 'life'), "common practice", CP),
    ("commercial", "aluminum-polymer", "required"): (('voltage', 'reverse', 'ripple', 'life'), "common practice", CP),
    ("industrial", "default", "required"): (('voltage', 'surge'), "common practice", CP),
    ("industrial", "default", "hotspot_required_above_a"): (0.3, "common practice", CP),
    ("industrial", "ceramic-class2", "required"): (('voltage', 'surge', 'dc-bias'), "common practice", CP),
    ("industrial", "tantalum-mno2", "required"): (('voltage', 'reverse', 'surge', 'ripple', 'hotspot'), "common practice", CP),
    ("industrial", "tantalum-polymer", "required"): (('voltage', 'reverse', 'surge', 'ripple', 'hotspot'), "common practice", CP),
    ("industrial", "aluminum-electrolytic", "required"): (('voltage', 'reverse', 'surge', 'ripple', 'hotspot', 'life'), "common practice", CP),
    ("industrial", "aluminum-polymer", "required"): (('voltage', 'reverse', 'surge', 'ripple', 'hotspot', 'life'), "common practice", CP),
    ("spaceflight", "default", "required"): ('all', "common practice", CP),
    ("spaceflight", "ceramic-class1", "required"): ('all', "common practice", CP),
    ("spaceflight", "ceramic-class2", "required"): ('all', "common practice", CP),
    ("spaceflight", "tantalum-mno2", "required"): ('all', "common practice", CP),
    ("spaceflight", "tantalum-polymer", "required"): ('all', "common practice", CP),
    ("spaceflight", "tantalum-wet", "required"): ('all', "common practice", CP),
    ("spaceflight", "aluminum-electrolytic", "required"): ('all', "common practice", CP),
    ("spaceflight", "aluminum-polymer", "required"): ('all', "common practice", CP),
    ("spaceflight", "film-polypropylene", "required"): ('all', "common practice", CP),
    ("spaceflight", "film-polyester", "required"): ('all', "common practice", CP),
    ("spaceflight", "mica-glass", "required"): ('all', "common practice", CP),
    ("commercial", "default", "voltage_factor"): (0.5, "common practice", CP),
    ("commercial", "default", "surge_factor"): (1.0, "datasheets", S),
    ("commercial", "default", "ripple_factor"): (1.0, "datasheets", S),
    ("commercial", "default", "hotspot_margin_c"): (0, "datasheets", S),
    ("commercial", "default", "life_factor"): (1.0, "common practice", CP),
    ("commercial", "default", "life_max_h"): (131400, "from memory", M),
    ("commercial", "default", "ac_voltage_factor"): (1.0, "IEC 60384-14", M),
    ("commercial", "tantalum-mno2", "ripple_temperature_multipliers"): (
        ((25, 1.0), (25.1, 0.9), (85, 0.9), (85.1, 0.4), (125, 0.4), (125.1, 0.3), (150, 0.3)), "KEMET T498", S),
    ("commercial", "tantalum-polymer", "ripple_temperature_multipliers"): (
        ((25, 1.0), (25.1, 0.9), (85, 0.9), (85.1, 0.4), (125, 0.4)), "from memory", M),
    ("commercial", "ceramic-class1", "voltage_factor"): (0.8, "IPC-9592", M),
    ("commercial", "ceramic-class1", "self_heating_max_c"): (20, "Murata MLCC FAQ", V),
    ("commercial", "ceramic-class2", "voltage_factor"): (0.8, "IPC-9592", M),
    ("commercial", "ceramic-class2", "self_heating_max_c"): (20, "Kyocera (AVX) MLCC design guide", V),
    ("commercial", "ceramic-class2", "dc_bias_min_fraction"): (0.5, "common practice", CP),
    ("commercial", "tantalum-mno2", "voltage_factor"): (0.5, "KEMET application Q&A", V),
    ("commercial", "tantalum-mno2", "category_voltage"): (((85, 1.0), (125, 0.667)), "MIL-PRF-55365", M),
    ("commercial", "tantalum-mno2", "reverse_factor_curve"): (((25, 0.10), (85, 0.03), (125, 0.01)), "secondary page", S),
    ("commercial", "tantalum-mno2", "reverse_max_v_curve"): (((25, 1.0), (85, 0.5), (125, 0.1)), "secondary page", S),
    ("commercial", "tantalum-polymer", "voltage_factor_by_rated_v"): (((10, 0.9), (100000, 0.8)), "KEMET application Q&A on polymer", V),
    ("commercial", "tantalum-polymer", "category_voltage"): (((105, 1.0), (125, 0.8)), "typically specified to 105 °C", M),
    ("commercial", "tantalum-polymer", "reverse_factor_curve"): (((25, 0.10), (85, 0.03), (125, 0.01)), "secondary page", S),
    ("commercial", "tantalum-polymer", "reverse_max_v_curve"): (((25, 1.0), (85, 0.5), (125, 0.1)), "secondary page", S),
    ("commercial", "tantalum-wet", "voltage_factor"): (0.6, "NASA EEE-INST-002", M),
    ("commercial", "aluminum-electrolytic", "voltage_factor"): (0.8, "IPC-9592", M),
    ("commercial", "aluminum-electrolytic", "reverse_max_v"): (1.5, "GE capacitor application data", V),
    ("commercial", "aluminum-electrolytic", "life_model"): ("arrhenius-10", "TDK electronics primer vol. 7", V),
    ("commercial", "aluminum-polymer", "voltage_factor"): (0.8, "IPC-9592", M),
    ("commercial", "aluminum-polymer", "reverse_max_v"): (1.5, "liquid aluminum", M),
    ("commercial", "aluminum-polymer", "life_model"): ("polymer-20", "polymer", M),
    ("commercial", "film-polypropylene", "voltage_factor"): (1.0, "film manufacturers", S),
    ("commercial", "film-polypropylene", "self_heating_max_c"): (5, "polypropylene", S),
    ("commercial", "film-polyester", "voltage_factor"): (1.0, "film manufacturers", S),
    ("commercial", "film-polyester", "self_heating_max_c"): (10, "polyester", S),
    ("commercial", "mica-glass", "voltage_factor"): (0.8, "common practice", CP),
    ("industrial", "default", "surge_factor"): (0.9, "common practice", CP),
    ("industrial", "default", "ripple_factor"): (0.8, "common practice", CP),
    ("industrial", "default", "hotspot_margin_c"): (10, "Rome Laboratory Reliability Engineer's Toolkit, Table D1-2", M),
    ("industrial", "ceramic-class1", "voltage_factor"): (0.6, "Rome Laboratory Reliability Engineer's Toolkit, Table D1-2", M),
    ("industrial", "ceramic-class2", "voltage_factor"): (0.6, "Rome Laboratory Reliability Engineer's Toolkit, Table D1-2", M),
    ("industrial", "ceramic-class2", "dc_bias_min_fraction"): (0.6, "common practice", CP),
    ("industrial", "tantalum-mno2", "voltage_factor"): (0.5, "KEMET application Q&A", V),
    ("industrial", "tantalum-mno2", "hotspot_margin_c"): (20, "Rome Laboratory Reliability Engineer's Toolkit, Table D1-2", M),
    ("industrial", "tantalum-polymer", "voltage_factor"): (0.6, "Rome Laboratory Reliability Engineer's Toolkit, Table D1-2", M),
    ("industrial", "tantalum-polymer", "hotspot_margin_c"): (20, "Rome Laboratory Reliability Engineer's Toolkit, Table D1-2", M),
    ("industrial", "tantalum-wet", "voltage_factor"): (0.6, "Rome Laboratory Reliability Engineer's Toolkit, Table D1-2", M),
    ("industrial", "tantalum-wet", "hotspot_margin_c"): (20, "Rome Laboratory Reliability Engineer's Toolkit, Table D1-2", M),
    ("industrial", "aluminum-electrolytic", "voltage_factor"): (0.8, "Rome Laboratory Reliability Engineer's Toolkit, Table D1-2", M),
    ("industrial", "aluminum-electrolytic", "hotspot_margin_c"): (20, "Rome Laboratory Reliability Engineer's Toolkit, Table D1-2", M),
    ("industrial", "aluminum-polymer", "voltage_factor"): (0.8, "liquid aluminum", M),
    ("industrial", "aluminum-polymer", "hotspot_margin_c"): (20, "liquid aluminum", M),
    ("industrial", "film-polypropylene", "voltage_factor"): (0.6, "Rome Laboratory Reliability Engineer's Toolkit, Table D1-2", M),
    ("industrial", "film-polyester", "voltage_factor"): (0.6, "Rome Laboratory Reliability Engineer's Toolkit, Table D1-2", M),
    ("industrial", "mica-glass", "voltage_factor"): (0.6, "Rome Laboratory Reliability Engineer's Toolkit, Table D1-2", M),
    ("spaceflight", "default", "surge_factor"): (0.8, "common practice", CP),
    ("spaceflight", "default", "ripple_factor"): (0.7, "common practice", CP),
    ("spaceflight", "default", "life_factor"): (2.0, "common practice", CP),
    ("spaceflight", "ceramic-class1", "voltage_factor"): (0.6, "NASA EEE-INST-002", M),
    ("spaceflight", "ceramic-class1", "hotspot_max_by_rated_c"): (((125, 110),), "NASA EEE-INST-002", M),
    ("spaceflight", "ceramic-class2", "voltage_factor"): (0.6, "NASA EEE-INST-002", M),
    ("spaceflight", "ceramic-class2", "hotspot_max_by_rated_c"): (((125, 110),), "NASA EEE-INST-002", M),
    ("spaceflight", "ceramic-class2", "dc_bias_min_fraction"): (0.7, "common practice", CP),
    ("spaceflight", "tantalum-mno2", "voltage_factor"): (0.5, "NASA EEE-INST-002", M),
    ("spaceflight", "tantalum-polymer", "voltage_factor"): (0.5, "NASA EEE-INST-002", M),
    ("spaceflight", "tantalum-wet", "voltage_factor"): (0.6, "NASA EEE-INST-002", M),
    ("spaceflight", "aluminum-electrolytic", "allowed"): (False, "NASA EEE-INST-002", M),
    ("spaceflight", "aluminum-polymer", "allowed"): (False, "NASA EEE-INST-002", M),
    ("spaceflight", "film-polypropylene", "voltage_factor"): (0.6, "NASA EEE-INST-002", M),
    ("spaceflight", "film-polyester", "voltage_factor"): (0.6, "NASA EEE-INST-002", M),
    ("spaceflight", "mica-glass", "voltage_factor"): (0.5, "NASA EEE-INST-002", M),
}


def _own_values(name):
    """The values a policy file sets itself (not inherited through extends)."""
    import yaml
    from importlib import resources
    raw = yaml.safe_load(resources.files("derate.rules").joinpath(f"{name}.yaml").read_text())
    return {(name, tech, key): v for tech, values in raw["technologies"].items() for key, v in values.items()}


def test_builtins_exist():
    assert builtin_names() == ["commercial", "industrial", "spaceflight"]


@pytest.mark.parametrize("name", ["commercial", "industrial", "spaceflight"])
def test_every_value_matches_its_reference(name):
    own = _own_values(name)
    assert set(own) == {k for k in REFERENCE if k[0] == name}, "a value without a reference row (or the reverse)"
    for key, raw in own.items():
        value, document, status = REFERENCE[key]
        got = raw["value"]
        if isinstance(value, tuple):
            assert [tuple(r) for r in got] == [tuple(r) for r in value], key
        else:
            assert got == value, key
        source = raw["source"]
        assert document.lower() in source.lower(), (key, source)
        assert raw.get("status") == status, (key, raw.get("status"), status)
        if status == M:
            assert "from memory" in source or "not verified" in source, (key, source)
        if status == CP:
            assert "common practice" in source, (key, source)


def test_extends_overrides_single_values():
    p = load_policy("spaceflight")
    assert p.chain == ("commercial", "industrial", "spaceflight")
    assert p.value("tantalum-mno2", "category_voltage") == ((85.0, 1.0), (125.0, 0.667))  # from commercial
    assert p.value("tantalum-mno2", "hotspot_margin_c") == 20  # from industrial
    assert p.value("ceramic-class2", "voltage_factor") == 0.6 and p.value("ceramic-class2", "hotspot_margin_c") == 10
    assert p.value("ceramic-class2", "hotspot_max_by_rated_c") == ((125.0, 110.0),)
    assert p.value("other", "voltage_factor") == 0.5  # 'default' applies to technologies without an entry


def test_policy_file_extending_a_builtin(tmp_path):
    f = tmp_path / "ours.yaml"
    f.write_text("name: ours\nextends: industrial\ntechnologies:\n  ceramic-class2:\n"
                 "    voltage_factor: {value: 0.5, source: 'company rule CR-12, common practice'}\n")
    p = load_policy(str(f))
    assert p.value("ceramic-class2", "voltage_factor") == 0.5
    assert p.value("ceramic-class2", "dc_bias_min_fraction") == 0.6


@pytest.mark.parametrize("text,message", [
    ("name: x\ntechnologies:\n  ceramic-class2:\n    voltage_factor: 0.5\n", "expected a mapping ({value: <number>, source: <text>}), got 0.5"),
    ("name: x\ntechnologies:\n  ceramic-class2:\n    voltage_factr: {value: 0.5, source: abc}\n", "unknown key(s) 'voltage_factr'"),
    ("name: x\ntechnologies:\n  cermic: {}\n", "unknown key(s) 'cermic'"),
    ("name: x\nextends: nosuch\n", "no built-in policy named 'nosuch'"),
    ("name: x\ntechnologies:\n  tantalum-mno2:\n    category_voltage: {value: [[85, 0.5], [125, 0.9]], source: abc}\n",
     "must not rise with temperature"),
])
def test_policy_errors(tmp_path, text, message):
    f = tmp_path / "bad.yaml"
    f.write_text(text)
    with pytest.raises(DataError) as info:
        load_policy(str(f))
    assert message in str(info.value) and "bad.yaml" in str(info.value)


def test_extends_cycle(tmp_path):
    (tmp_path / "a.yaml").write_text("name: a\nextends: b.yaml\n")
    (tmp_path / "b.yaml").write_text("name: b\nextends: a.yaml\n")
    with pytest.raises(DataError, match="cycle"):
        load_policy(str(tmp_path / "a.yaml"))
