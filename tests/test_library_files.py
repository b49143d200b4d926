"""Parts libraries and settings files of the wrong shape: one located error, exit 2.

Outside source: TOML 1.0 (toml.io) types: ``"no"`` is a string, not a boolean; ``nan``
and ``inf`` are floats; integers are 64-bit. Each file below breaks one rule of our
formats; the expected line and column are counted by hand in the file.
"""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from schemcheck.cli import main

from .conftest import FIXTURES

CHAIN = FIXTURES / "demo" / "chain.kicad_sch"
ENTRY = '# parts\n[parts."OPX-9"]\ninput = "bipolar"\nvos = { max = "1mV" }\nib = "20nA"\n'


def audit(*args):
    result = CliRunner().invoke(main, ["audit", *map(str, args), "--no-cache", "--samples", "0"])
    assert result.exception is None or isinstance(result.exception, SystemExit)
    return result.exit_code, result.stdout, result.stderr


@pytest.mark.parametrize(("line", "expected"), [
    ('t_hot = "hot"\n', "6:1: entry 'OPX-9', key 't_hot': expected a temperature in °C above "
                        "25 and at most 1000 (like 85), found 'hot'"),
    ("t_hot = nan\n", "6:1: entry 'OPX-9', key 't_hot': expected a temperature in °C above 25 "
                      "and at most 1000 (like 85), found nan"),
    ("aliases = 5\n", "6:1: entry 'OPX-9', key 'aliases': expected a list of part numbers, "
                      "found 5"),
    ('aol = "100000dB"\n', "6:1: entry 'OPX-9', key 'aol': expected open-loop gain of at least "
                           "1 V/V (0 dB) and finite, found '100000dB'"),
    ("aol = 0\n", "6:1: entry 'OPX-9', key 'aol': expected open-loop gain of at least 1 V/V "
                  "(0 dB) and finite, found '0'"),
    ('ib_either_sign = "no"\n', "6:1: entry 'OPX-9', key 'ib_either_sign': expected true or "
                                "false, found 'no'"),
    ("ios = { max = true }\n", "6:1: entry 'OPX-9', key 'ios.max': expected a value like "
                               "'2nA', found True"),
    ("ios = { most = \"1nA\" }\n", "6:1: entry 'OPX-9', key 'ios': unknown key 'most' "
                                   "(expected typ, max)"),
    ("colour = 1\n", "6:1: entry 'OPX-9', key 'colour': unknown key (expected one of"),
    ("x = " + "[" * 3000 + "\n",
     "1:1: expected a TOML parts library, found arrays or tables nested too deeply to read"),
    ('vos = "1mV\n', "6:11: expected a TOML parts library: Illegal character '\\n'"),
])
def test_parts_library_of_the_wrong_type(tmp_path, line, expected):
    library = tmp_path / "parts.toml"
    library.write_text(ENTRY + line, encoding="utf-8")
    code, out, err = audit(CHAIN, "--parts", library)
    assert code == 2
    first = err.splitlines()[0]
    assert first.startswith(f"Error: {library}:{expected}"), first
    assert json.loads(out)["designs"][0]["findings"][0]["rule"] == "unreadable-design"


@pytest.mark.parametrize(("text", "expected"), [
    ("temperature_range = [nan, nan]\n", "1:1: key 'temperature_range': expected [MIN, MAX] in "
                                         "°C, two finite numbers, found [nan, nan]"),
    ("temperature_range = [0, inf]\n", "1:1: key 'temperature_range': expected [MIN, MAX] in "
                                       "°C, two finite numbers"),
    ("temperature_range = [true, false]\n", "1:1: key 'temperature_range': expected [MIN, MAX]"),
    ("temperature_range = [0, " + "1" * 400 + "]\n", "1:1: key 'temperature_range': expected "
                                                    "[MIN, MAX] in °C, two finite numbers"),
    ("seed = 1\nseed2 = 3\n", "2:1: unknown key 'seed2'"),
    ("\nseed = -1\n", "2:1: key 'seed': expected a whole number from 0 to 9223372036854775807, "
                      "found -1"),
    ("monte_carlo_samples = true\n", "1:1: key 'monte_carlo_samples': expected a whole number "
                                     "from 0 to 1000000, found True"),
    ("rules_off = [{a = 1}]\n", "1:1: key 'rules_off': expected a list of rule ids"),
    ('[source_resistance]\nA = "1e999"\n', "1:1: expected a finite resistance for "
                                           "source_resistance.A"),
])
def test_settings_file_of_the_wrong_type(tmp_path, text, expected):
    (tmp_path / "chain.kicad_sch").write_bytes(CHAIN.read_bytes())
    (tmp_path / "schemcheck.toml").write_text(text, encoding="utf-8")
    code, out, err = audit(tmp_path / "chain.kicad_sch")
    assert code == 2
    first = err.splitlines()[0]
    assert first.startswith(f"Error: {tmp_path / 'schemcheck.toml'}:{expected}"), first


def test_missing_library_named_by_settings_is_located(tmp_path):
    (tmp_path / "chain.kicad_sch").write_bytes(CHAIN.read_bytes())
    (tmp_path / "schemcheck.toml").write_text('seed = 2\nparts_library = "gone.toml"\n',
                                              encoding="utf-8")
    code, _, err = audit(tmp_path / "chain.kicad_sch")
    assert code == 2
    assert err.splitlines()[0] == (
        f"Error: {tmp_path / 'schemcheck.toml'}:2:1: parts_library "
        f"'{tmp_path / 'gone.toml'}': expected a parts library here, found nothing (no such file)")


def test_well_typed_library_still_reads():
    # the demo library (strings, numbers, booleans as the format says) is unchanged
    code, out, _ = audit(FIXTURES / "demo" / "frontend.kicad_sch")
    assert code == 1 and json.loads(out)["designs"][0]["errors"] == []
