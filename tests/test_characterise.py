"""Bench characterisation from test-loop readings.

Outside sources: an independent sympy solution of the test loop itself (DUT with Vos,
Ib+ and Ib- sources, Rs at each input with its switch, the R1/R2 divider of gain
G = 1 + R2/R1 with a buffered tap, an ideal auxiliary integrator holding the DUT at
balance); common practice for the size of Rs (at least about 100 kΩ for nA bias
currents); the FET rule of thumb (bias current doubles about every 10 °C) for the
synthetic temperature data; a golden file for the library update.
"""

from __future__ import annotations

import csv
import shutil

import numpy as np
import pytest
import sympy
from click.testing import CliRunner

from schemcheck.characterise.command import characterise_file
from schemcheck.cli import main

from .conftest import FIXTURES

COLUMNS = ["sample", "temp_c", "v1", "v2", "v3", "v4", "gain", "rs", "resolution", "rail"]


def loop_readings(vos, ib_plus, ib_minus, r1, r2, rs):
    """The auxiliary output in the four switch states, solved symbolically."""
    X, T, vp, vm = sympy.symbols("X T V_p V_m")
    out = []
    for rs_p, rs_m in ((0, 0), (rs, 0), (0, rs), (rs, rs)):
        equations = [
            sympy.Eq(T, X * sympy.Rational(r1) / (sympy.Rational(r1) + sympy.Rational(r2))),
            sympy.Eq(vp, T - ib_plus * rs_p),  # Ib+ flows from the tap through Rs into the pin
            sympy.Eq(vm, 0 - ib_minus * rs_m),  # Ib- flows from ground through Rs into the pin
            sympy.Eq(vp - vm, vos),  # the integrator holds the DUT at balance
        ]
        out.append(sympy.solve(equations, [X, T, vp, vm], dict=True)[0][X])
    return out


def write_csv(path, rows):
    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, COLUMNS)
        writer.writeheader()
        for row in rows:
            writer.writerow(row)


def test_algebra_against_the_solved_loop(tmp_path):
    # Invented part values, with Ib- of the opposite sign (a compensated input).
    parts = [("A1", 25.0, sympy.Rational("0.000731"), sympy.Rational("23.4e-9"),
              sympy.Rational("-18.9e-9")),
             ("A2", 25.0, sympy.Rational("-0.000412"), sympy.Rational("-7.7e-9"),
              sympy.Rational("11.3e-9"))]
    r1, r2, rs = 100, 99900, 1_000_000
    rows = []
    for sample, temp, vos, ibp, ibm in parts:
        v1, v2, v3, v4 = loop_readings(vos, ibp, ibm, r1, r2, rs)
        rows.append({"sample": sample, "temp_c": temp, "v1": repr(float(v1)), "v2": repr(float(v2)),
                     "v3": repr(float(v3)), "v4": repr(float(v4)), "gain": 1 + r2 / r1,
                     "rs": "1M", "resolution": 1e-6, "rail": ""})
    write_csv(tmp_path / "loop.csv", rows)
    report = characterise_file(str(tmp_path / "loop.csv"))
    assert report["problems"] == []
    for got, (_, _, vos, ibp, ibm) in zip(report["samples"], parts):
        np.testing.assert_allclose(got["vos"], float(vos), rtol=1e-9)
        np.testing.assert_allclose(got["ib_plus"], float(ibp), rtol=1e-9)
        np.testing.assert_allclose(got["ib_minus"], float(ibm), rtol=1e-9)
        np.testing.assert_allclose(got["ib"], float((ibp + ibm) / 2), rtol=1e-9)
        np.testing.assert_allclose(got["ios"], float(ibp - ibm), rtol=1e-9)
        np.testing.assert_allclose(got["ios_direct"], float(ibp - ibm), rtol=1e-9)


def _row(rs, gain=100.0, ib=1e-9, resolution=10e-6, vos=1e-4, **extra):
    v1 = gain * vos
    return {"sample": "S1", "temp_c": 25, "v1": v1, "v2": gain * (vos + ib * rs),
            "v3": gain * (vos - ib * rs), "v4": "", "gain": gain, "rs": rs,
            "resolution": resolution, "rail": "", **extra}


def test_rs_too_small_is_flagged_and_large_rs_accepted(tmp_path):
    # Common practice: Rs of about 100 kΩ or more for nA bias currents. With 100 Ω,
    # 1 nA and G = 100 the step is 10 µV, one count of a 10 µV meter.
    write_csv(tmp_path / "small.csv", [_row(100)])
    report = characterise_file(str(tmp_path / "small.csv"))
    checks = {p["check"] for p in report["problems"]}
    assert checks == {"step-too-small"}
    assert "Rs of at least 1 kΩ would give a readable step of 10 counts" in \
        report["problems"][0]["message"]
    write_csv(tmp_path / "large.csv", [_row(1e6)])
    assert characterise_file(str(tmp_path / "large.csv"))["problems"] == []


def test_saturation_contradiction_and_bad_cells(tmp_path):
    rows = [_row(1e6, rail=10.0, v1=9.9), _row(1e6, v4=5.0),
            {**_row(1e6), "v2": "abc"}, {**_row(1e6), "gain": ""}]
    write_csv(tmp_path / "bad.csv", rows)
    report = characterise_file(str(tmp_path / "bad.csv"))
    messages = {(p["row"], p["check"]): p["message"] for p in report["problems"]}
    assert (2, "saturated") in messages
    assert (3, "inconsistent") in messages
    assert messages[(4, "not-a-number")] == "row 4, column v2: expected a number, found 'abc'"
    assert messages[(5, "missing-cell")] == ("row 5, column gain: expected a number, found an "
                                             "empty cell")


def _temperature_rows(tcvos, doubling, noise=0.0, seed=1):
    rng = np.random.default_rng(seed)
    rows = []
    gain, rs = 1000.0, 1e9
    for sample, (vos25, ib25) in {"B1": (2e-4, 10e-12), "B2": (-1e-4, 14e-12),
                                  "B3": (5e-5, 8e-12)}.items():
        for temp in (25, 45, 65, 85):
            vos = vos25 + tcvos * (temp - 25) + noise * rng.normal()
            ib = ib25 * 2 ** ((temp - 25) / doubling)
            ibp, ibm = ib * 1.1, ib * 0.9
            rows.append({"sample": sample, "temp_c": temp, "v1": gain * vos,
                         "v2": gain * (vos + ibp * rs), "v3": gain * (vos - ibm * rs), "v4": "",
                         "gain": gain, "rs": "1G", "resolution": 1e-6, "rail": ""})
    return rows


def test_temperature_fit_recovers_drift_and_doubling(tmp_path):
    # FET rule of thumb: bias current doubles about every 10 °C.
    write_csv(tmp_path / "t.csv", _temperature_rows(3e-6, 10.0))
    summary = characterise_file(str(tmp_path / "t.csv"))["summary"]
    assert summary["tcvos"]["slope"] == pytest.approx(3e-6, rel=1e-9)
    assert summary["tcvos"]["residual"] == pytest.approx(0.0, abs=1e-15)
    assert summary["bias_current"]["kind"] == "exponential"
    assert summary["bias_current"]["doubling_c"] == pytest.approx(10.0, rel=0.05)


def test_noisy_data_give_the_stated_residual(tmp_path):
    # Gaussian noise of 2 µV on Vos: the RMS residual of the per-sample line fits is
    # sigma * sqrt((n - 2) / n) in expectation (n = 4 points a line), about 1.4 µV.
    write_csv(tmp_path / "n.csv", _temperature_rows(3e-6, 10.0, noise=2e-6, seed=4))
    tcvos = characterise_file(str(tmp_path / "n.csv"))["summary"]["tcvos"]
    assert tcvos["slope"] == pytest.approx(3e-6, abs=0.2e-6)
    assert 0.5e-6 < tcvos["residual"] < 3e-6


def test_library_update_round_trips_the_rest(tmp_path):
    library = tmp_path / "parts.toml"
    shutil.copy(FIXTURES / "bench" / "library_before.toml", library)
    write_csv(tmp_path / "t.csv", _temperature_rows(3e-6, 10.0))
    report = characterise_file(str(tmp_path / "t.csv"), parts=str(library), part="LX-J1")
    assert report["library"]["written"] is True
    golden = (FIXTURES / "bench" / "library_after.toml").read_text(encoding="utf-8")
    assert library.read_text(encoding="utf-8") == golden
    from schemcheck.io.partslib import load_parts_library

    entries = load_parts_library(library)  # still a valid library
    assert entries["LX-B27"]["aol"] == "120dB" and entries["LX-J1"]["input"] == "jfet"


def test_nothing_written_on_bad_rows_or_dry_run(tmp_path):
    library = tmp_path / "parts.toml"
    shutil.copy(FIXTURES / "bench" / "library_before.toml", library)
    before = library.read_text(encoding="utf-8")
    rows = _temperature_rows(3e-6, 10.0) + [{**_row(100), "sample": "BAD"}]
    write_csv(tmp_path / "t.csv", rows)
    report = characterise_file(str(tmp_path / "t.csv"), parts=str(library), part="LX-J1")
    assert report["library"]["written"] is False and library.read_text(encoding="utf-8") == before
    report = characterise_file(str(tmp_path / "t.csv"), parts=str(library), part="LX-J1",
                               dry_run=True, skip_bad_rows=True)
    assert report["library"]["written"] is False and "+vos = " in report["library"]["diff"]
    report = characterise_file(str(tmp_path / "t.csv"), parts=str(library), part="LX-J1",
                               skip_bad_rows=True)
    assert report["library"]["written"] is True and report["skipped_rows"] == [14]


def test_cli_exit_statuses(tmp_path):
    write_csv(tmp_path / "ok.csv", [_row(1e6)])
    write_csv(tmp_path / "bad.csv", [_row(100)])
    (tmp_path / "junk.csv").write_bytes(b"\xff\xfe not csv")
    runner = CliRunner()
    assert runner.invoke(main, ["bench", str(tmp_path / "ok.csv")]).exit_code == 0
    assert runner.invoke(main, ["bench", str(tmp_path / "bad.csv")]).exit_code == 1
    result = runner.invoke(main, ["bench", str(tmp_path / "junk.csv"), "--format", "json"])
    assert result.exit_code == 2 and result.stderr.startswith("Error: ")
