"""valvol.toml: typed settings, unknown keys rejected (README, configuration)."""

import pytest

from valvol.config import Config, config_from_mapping, load_config
from valvol.errors import ConfigError


def test_defaults_without_file(tmp_path):
    cfg = load_config(tmp_path)
    assert cfg == Config()
    assert cfg.hierarchy.aggregates["B1GQ"][3].item == "P7"
    assert cfg.hierarchy.aggregates["B1GQ"][3].sign == -1


def test_full_file_is_read(tmp_path):
    (tmp_path / "valvol.toml").write_text(
        'reference_year = 2020\nlevels_at_annual_rate = true\n[aggregates]\nB1GQ = ["P3", "-P7"]\n'
        'P3 = ["P31_S14", "P3_S13"]\n[checks]\ntolerance_abs = 1\n[volumes]\nmethod = "over_the_year"\n'
    )
    cfg = load_config(tmp_path)
    assert cfg.reference_year == 2020 and cfg.levels_at_annual_rate
    assert cfg.hierarchy.order().index("P3") < cfg.hierarchy.order().index("B1GQ")
    assert cfg.checks.tolerance_abs == 1.0
    assert cfg.volumes.method == "over_the_year"


@pytest.mark.parametrize(
    "raw, fragment",
    [
        ({"refrence_year": 2020}, "unknown key(s) refrence_year"),
        ({"reference_year": "2020"}, "four-digit year"),
        ({"levels_at_annual_rate": 1}, "true or false"),
        ({"aggregates": {"B1GQ": "P3"}}, "must be a list"),
        ({"aggregates": {"B1GQ": ["P3"], "P3": ["B1GQ"]}}, "cycle"),
        ({"aggregates": {"gdp": ["P3"]}}, "form of an SNA code"),
        ({"checks": {"tolerance": 1}}, "unknown key(s) in [checks]"),
        ({"volumes": {"method": "chain"}}, "must be one of"),
        ({"contributions": {"convention": "ons"}}, "must be one of"),
        ({"carry_columns": "obs_status"}, "carry_columns must be a list of lower-case column names"),
        ({"carry_columns": ["OBS_STATUS"]}, "carry_columns must be a list of lower-case column names"),
        ({"carry_columns": ["unit"]}, "carry_columns: unit is a column valvol reads or adds itself"),
        ({"carry_columns": ["derived_from"]}, "carry_columns: derived_from is a column valvol reads or adds"),
        ({"carry_columns": ["obs_status", "obs_status"]}, "carry_columns lists a column twice"),
        ({"checks": {"index_tolerance": -0.05}}, "[checks] index_tolerance must be a finite non-negative number"),
    ],
)
def test_bad_settings_are_config_errors(raw, fragment):
    with pytest.raises(ConfigError) as err:
        config_from_mapping(raw, source="x/valvol.toml")
    assert fragment in str(err.value)
    assert str(err.value).startswith("x/valvol.toml")


def test_invalid_toml_names_file(tmp_path):
    (tmp_path / "valvol.toml").write_text("reference_year = \n")
    with pytest.raises(ConfigError, match="valvol.toml: not valid TOML"):
        load_config(tmp_path)


@pytest.mark.parametrize(
    "raw, fragment",
    [
        ({"benchmark": {"items": ["P5IG"]}}, "unknown item code(s) P5IG"),
        ({"benchmark": {"items": ["P51G"], "price_bases": ["curent"]}}, "price_bases must be among"),
        ({"reconcile": {"aggregate": "P6"}}, "not declared in [aggregates]"),
        ({"benchmark": {"items": ["P51G"], "benchmarks": "a/x.csv"}, "reconcile": {"aggregate": "B1GQ",
                                                                                  "benchmarks": "b/y.csv"}},
         "different benchmarks files"),
    ],
)
def test_bad_adjustment_settings(raw, fragment):
    with pytest.raises(ConfigError) as err:
        config_from_mapping(raw, source="v.toml")
    assert fragment in str(err.value)


def test_carried_columns_and_index_tolerance(tmp_path):
    # README, configuration: carry_columns (top level) and [checks] index_tolerance
    (tmp_path / "valvol.toml").write_text('carry_columns = ["obs_status", "conf_status"]\n[checks]\n'
                                          'index_tolerance = 0.005\n')
    cfg = load_config(tmp_path)
    assert cfg.carry_columns == ("obs_status", "conf_status")
    assert cfg.checks.index_tolerance == 0.005
    assert cfg.as_dict()["carry_columns"] == ["obs_status", "conf_status"]
    assert Config().carry_columns == () and Config().checks.index_tolerance == 0.05
