"""One rule registry feeds every list of rules: settings validation, SARIF rule metadata,
and the README's rule table."""

from __future__ import annotations

import json

from click.testing import CliRunner

from schemcheck.cli import main
from schemcheck.rules import RULES, SEVERITIES, markdown_table

from .conftest import ROOT


def test_readme_rule_table_is_the_registry():
    assert markdown_table() in (ROOT / "README.md").read_text(encoding="utf-8")


def test_every_rule_is_complete():
    for rule in RULES.values():
        assert rule.severity in SEVERITIES and rule.title and rule.help and rule.rationale


def test_sarif_lists_every_registered_rule(monkeypatch):
    monkeypatch.chdir(ROOT)
    result = CliRunner().invoke(main, ["audit", "fixtures/demo/frontend.kicad_sch", "--format",
                                       "sarif", "--no-cache", "--samples", "0"])
    driver = json.loads(result.stdout)["runs"][0]["tool"]["driver"]
    assert [r["id"] for r in driver["rules"]] == list(RULES)


def test_settings_refuse_an_unknown_rule(tmp_path):
    from schemcheck.errors import ParseError
    from schemcheck.io.settings_file import load_settings
    from schemcheck.settings import Settings

    path = tmp_path / "schemcheck.toml"
    path.write_text('rules_off = ["no-such-rule"]\n', encoding="utf-8")
    try:
        load_settings(str(path), Settings())
    except ParseError as error:
        assert "no-bias-path" in str(error)
    else:
        raise AssertionError("an unknown rule id was accepted")
