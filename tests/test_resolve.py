"""One resolver decides a design's files: the reader, the cache key, the service and the
editor action agree on them.

Outside source: the files each design is made of are known by construction (written
here), and for the real corpus designs the reader's own list of the sheets it read is
the reference the resolver must reproduce.
"""

from __future__ import annotations

import importlib.util
import os

import pytest

from schemcheck.io.design import load_design
from schemcheck.io.resolve import design_files, normalised, sheet_files

from .conftest import FIXTURES, ROOT, corpus_files, corpus_ids
from .test_batch import fallback_design

_SPEC = importlib.util.spec_from_file_location("action", ROOT / "scripts" / "schemcheck_action.py")
action = importlib.util.module_from_spec(_SPEC)
_SPEC.loader.exec_module(action)


def read_by_reader(root) -> set[str]:
    """Every sheet file the reader opened: those it read and those it found broken."""
    design = load_design(root)
    broken = {normalised(p.file) for p in design.problems
              if getattr(p, "file", None) and os.path.isfile(p.file)}
    return set(design.sheets) | broken


def test_child_found_through_the_root_folder_is_read_and_resolved(tmp_path):
    root = fallback_design(tmp_path)
    expected = {normalised(tmp_path / n) for n in ("root.kicad_sch", "sub/a.kicad_sch",
                                                   "b.kicad_sch")}
    assert read_by_reader(root) == expected
    assert set(sheet_files(str(root))) == expected


def test_editor_action_sends_the_resolvers_files(tmp_path):
    root = fallback_design(tmp_path)
    (tmp_path / "schemcheck.toml").write_text('parts_library = "parts.toml"\n',
                                              encoding="utf-8")
    (tmp_path / "parts.toml").write_text("[parts]\n", encoding="utf-8")
    files = action.design_files(str(root))
    assert files == list(design_files(str(root)))
    assert {os.path.relpath(f, tmp_path) for f in files} == {
        "root.kicad_sch", os.path.join("sub", "a.kicad_sch"), "b.kicad_sch", "schemcheck.toml",
        "parts.toml"}


CORPUS_SHEETS = corpus_files(".kicad_sch")
FIXTURE_ROOTS = sorted((FIXTURES / "demo").glob("*.kicad_sch")) + [
    FIXTURES / "reader" / "hier" / "hier.kicad_sch"]


@pytest.mark.parametrize("root", CORPUS_SHEETS + FIXTURE_ROOTS,
                         ids=corpus_ids(CORPUS_SHEETS) + [p.name for p in FIXTURE_ROOTS])
def test_resolver_names_the_sheets_the_reader_reads(root):
    assert set(sheet_files(str(root))) == read_by_reader(root)
