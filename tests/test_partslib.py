"""The parts-library format: the README's example, validation errors, typical-only
figures, and the reader's independence from the engine.

Outside sources: the unit conversions (milli = 1e-3, micro = 1e-6, pico = 1e-12, SI
prefixes, BIPM SI Brochure, 9th edition, table 7) and the decibel definition of gain
(20·log10 of the voltage ratio, IEC 60027-3) give the expected numbers; the expected
error texts are ours, with line numbers counted by hand in each file.
"""

from __future__ import annotations

import re
import subprocess
import sys

import pytest

from schemcheck.engine.params import from_library
from schemcheck.errors import ParseError
from schemcheck.io.partslib import load_parts_library

from .conftest import ROOT


def readme_example() -> str:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text[text.index("## Parts library"):]
    return re.search(r"```toml\n(.*?)```", section, re.DOTALL).group(1)


def test_readme_example_is_a_valid_library(tmp_path):
    path = tmp_path / "opamps.toml"
    path.write_text(readme_example(), encoding="utf-8")
    entries = load_parts_library(path)
    assert list(entries) == ["LX1612", "OPX-7", "OPX-Z1"]
    lx = from_library("LX1612", entries["LX1612"])
    # SI prefixes (BIPM SI Brochure): 2 mV, 50 pA, 25 pA, 2 nA; 110 dB = 10^(110/20) V/V
    assert (lx.vos, lx.ib, lx.ios, lx.ib_hot) == pytest.approx((2e-3, 50e-12, 25e-12, 2e-9),
                                                                rel=1e-12)
    assert lx.aol == pytest.approx(10 ** 5.5, rel=1e-12)
    assert lx.tcvos == pytest.approx(3e-6, rel=1e-12) and lx.typical_only == ("tcvos",)
    assert lx.source["tcvos"] == "library:LX1612 (typical only)"
    assert lx.source["vos"] == "library:LX1612"
    compensated = from_library("OPX-7", entries["OPX-7"])
    assert compensated.ib_either_sign and not compensated.bias_currents_matched
    chopper = from_library("OPX-Z1", entries["OPX-Z1"])
    assert chopper.input_type == "chopper" and not chopper.bias_currents_matched


def test_reader_returns_entries_as_written(tmp_path):
    path = tmp_path / "opamps.toml"
    path.write_text(readme_example(), encoding="utf-8")
    entries = load_parts_library(path)
    assert entries["LX1612"]["vos"] == {"typ": "0.5mV", "max": "2mV"}
    assert entries["LX1612"]["ios"] == "25pA"


def test_reader_does_not_import_the_engine():
    # The file reader checks the format on its own; turning entries into engine
    # parameters is the engine's job.
    code = ("import sys, schemcheck.io.partslib; "
            "print(sorted(m for m in sys.modules if m.startswith('schemcheck.engine')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True, cwd=ROOT).stdout
    assert out.strip() == "[]"


def test_empty_strings_are_not_given(tmp_path):
    path = tmp_path / "skeleton.toml"
    path.write_text('[parts."OPX-1"]\ninput = ""\nvos = { typ = "", max = "" }\n'
                    'ib = { typ = "5nA", max = "" }\n', encoding="utf-8")
    params = from_library("OPX-1", load_parts_library(path)["OPX-1"])
    assert params.vos is None and params.input_type == "unknown"
    assert params.ib == pytest.approx(5e-9, rel=1e-12) and params.typical_only == ("ib",)


HEAD = '# a library\n\n[parts."LX1612"]\ninput = "jfet"\n'


@pytest.mark.parametrize(("text", "message"), [
    pytest.param(HEAD + 'vso = "1mV"\n',
                 "lib.toml:5:1: entry 'LX1612', key 'vso': unknown key (expected one of "
                 "aliases, aol, "
                 "description, ib, ib_either_sign, ib_hot, input, ios, ios_hot, measured, rule, "
                 "t_hot, tcvos, vos)", id="unknown-key"),
    pytest.param(HEAD + 'vos = { min = "1mV" }\n',
                 "lib.toml:5:1: entry 'LX1612', key 'vos': unknown key 'min' (expected typ, max)",
                 id="unknown-limit"),
    pytest.param(HEAD + 'ib = "2"\nvos = { typ = "1mV", max = "3mA" }\n',
                 "lib.toml:6:1: entry 'LX1612', key 'vos.max': expected vos in volts (2mV, 500uV, "
                 "250µV), found '3mA'", id="bad-unit"),
    pytest.param(HEAD + 'tcvos = "5uV"\n',
                 "lib.toml:5:1: entry 'LX1612', key 'tcvos': expected tcvos in volts per °C "
                 "(5uV/°C), found '5uV'", id="drift-without-per-degree"),
    pytest.param(HEAD + '\nvos = { typ = "2mV", max = "1mV" }\n',
                 "lib.toml:6:1: entry 'LX1612', key 'vos': max (1 mV) is below typ (2 mV)",
                 id="max-below-typ"),
    pytest.param('[parts."LX1612"]\ninput = "bjt"\n',
                 "lib.toml:2:1: entry 'LX1612', key 'input': expected bipolar | "
                 "bipolar-compensated | jfet | cmos | chopper, found 'bjt'", id="input-type"),
    pytest.param(HEAD + 't_hot = 20\n',
                 "lib.toml:5:1: entry 'LX1612', key 't_hot': expected a temperature in °C above "
                 "25 and at most 1000 (like 85), found 20", id="t-hot"),
    pytest.param(HEAD + 'aliases = "LX1612A"\n',
                 "lib.toml:5:1: entry 'LX1612', key 'aliases': expected a list of part numbers, "
                 "found 'LX1612A'", id="aliases-not-a-list"),
    pytest.param(HEAD + '\n[parts."LX1613"]\naliases = ["lx1612"]\n',
                 "lib.toml:7:1: entry 'LX1613', key 'aliases': 'lx1612' already names entry "
                 "'LX1612' (each name or alias must be unique)", id="alias-taken"),
    pytest.param('title = "x"\n' + HEAD,
                 "lib.toml:1:1: unknown top-level key 'title' (expected [parts.\"NAME\"] tables)",
                 id="top-level-key"),
    pytest.param(HEAD + 'ib_either_sign = "yes"\n',
                 "lib.toml:5:1: entry 'LX1612', key 'ib_either_sign': expected true or false, "
                 "found 'yes'", id="either-sign"),
])
def test_validation_names_file_line_entry_and_key(tmp_path, monkeypatch, text, message):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "lib.toml").write_text(text, encoding="utf-8")
    with pytest.raises(ParseError) as caught:
        load_parts_library("lib.toml")
    assert str(caught.value) == message
