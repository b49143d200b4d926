"""Values given in the settings file, and what every output says about stages the tool
did not analyse.

Outside source: the TOML 1.0 specification (tables and arrays of tables, read by the
standard library's tomllib); the fixture's values and what they mean are stated in
fixtures/README.md (``t2k`` is a 2 kΩ trimmer in the invented house notation, ``1m`` is
ambiguous). Noise gains: 1 + Rf/Ri (handbook form).
"""

from __future__ import annotations

import json
import shutil

import pytest
from click.testing import CliRunner

from schemcheck.cli import main
from schemcheck.errors import ParseError
from schemcheck.io.settings_file import load_settings

from .conftest import FIXTURES

SETTINGS = """\
[values]
R9 = "1M"
[[value_notation]]
match = '^t(.+)$'
value = '\\1'
"""


def test_settings_file_values_and_notations(tmp_path):
    path = tmp_path / "schemcheck.toml"
    path.write_text(SETTINGS, encoding="utf-8")
    settings = load_settings(str(path))
    assert settings.values == {"R9": "1M"}
    assert settings.value_notations == (("^t(.+)$", "\\1"),)
    described = settings.describe()
    assert described["values"] == {"R9": "1M"}
    assert described["value_notations"] == [["^t(.+)$", "\\1"]]


@pytest.mark.parametrize(("text", "message"), [
    ('[values]\nR9 = "t2k"\n',
     "expected a resistance for values.R9 (like 10k, 4k7, 2.2 kΩ, 10Meg, 100kA), found 't2k'"),
    ("[values]\nR9 = 5\n", "key 'values': expected a table of REFERENCE = \"value\" (like "
                           "R13 = \"1M\"), found {'R9': 5}"),
    ("[[value_notation]]\nmatch = '^t(.+$'\nvalue = '1'\n",
     "key 'value_notation': expected a valid regular expression (missing ), unterminated "
     "subpattern at position 2), found [{'match': '^t(.+$', 'value': '1'}]"),
    ("[[value_notation]]\nmatch = 't'\n",
     "key 'value_notation': expected an array of tables with 'match' (a regular expression) "
     "and 'value', found [{'match': 't'}]"),
])
def test_bad_value_settings_name_the_key(tmp_path, text, message):
    path = tmp_path / "schemcheck.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(ParseError) as caught:
        load_settings(str(path))
    assert caught.value.message == message
    assert caught.value.file == str(path)


def _audit(tmp_path, fmt, settings=None):
    design = tmp_path / "values.kicad_sch"
    shutil.copy(FIXTURES / "network" / "values.kicad_sch", design)
    if settings is not None:
        (tmp_path / "schemcheck.toml").write_text(settings, encoding="utf-8")
    result = CliRunner().invoke(main, ["audit", str(design), "--format", fmt, "--no-cache",
                                       "--samples", "0", "--fail-on", "error", "-j", "1"])
    assert result.exit_code == 0, result.output
    return result.stdout


def test_json_carries_the_new_keys(tmp_path):
    report = json.loads(_audit(tmp_path, "json"))
    (design,) = report["designs"]
    u3 = next(s for s in design["stages"] if s["ref"] == "U3")
    assert u3["noise_gain_range"] == pytest.approx([1.0, 11.0], rel=1e-4)
    assert u3["budget_at"] == "RV1 wiper at 100%"
    assert u3["excludes"] == []
    reasons = {item["ref"]: item for item in design["not_analysed"]}
    assert reasons["U4"]["reason"] == ("R7 Value 't2k' could not be read (not a resistance in "
                                       "any notation the tool reads)")
    assert reasons["U4"]["channel"] is None
    rules = sorted(f["rule"] for f in design["findings"] if f["severity"] == "warning")
    assert rules == ["unreadable-value", "unreadable-value"]


def test_text_and_markdown_say_why_a_stage_is_not_analysed(tmp_path):
    text = _audit(tmp_path, "text")
    assert ("not analysed: U4 (OPX-1): R7 Value 't2k' could not be read (not a "
            "resistance in any notation the tool reads)") in text
    assert ("      potentiometers: noise gain 1 to 11 over their travel; budget at RV1 wiper "
            "at 100%") in text
    markdown = _audit(tmp_path, "markdown")
    assert ("- [ ] U5 (OPX-1): not analysed, R9 Value '1m' could not be read "
            "(ambiguous, milli-ohm or mega-ohm)") in markdown
    assert ("  - potentiometers: noise gain 1 to 11 over their travel; budget at RV1 wiper at "
            "100%") in markdown


def test_settings_file_beside_the_design_reads_the_values(tmp_path):
    report = json.loads(_audit(tmp_path, "json", SETTINGS))
    (design,) = report["designs"]
    gains = {s["ref"]: s["noise_gain"] for s in design["stages"]}
    assert gains["U4"] == pytest.approx(1 + 20e3 / 2e3, rel=1e-9)  # t2k read as 2 kΩ
    assert gains["U5"] == pytest.approx(1.0, rel=1e-9)
    assert design["not_analysed"] == []
