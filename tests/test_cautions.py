"""CAUTIONS.md and the short cautions shown by the CLI and report stay in step."""

from groundcalc.cautions import CAUTIONS, DRAFT_MARK

from .conftest import ROOT


def test_every_short_caution_is_a_heading_of_cautions_md():
    text = (ROOT / "CAUTIONS.md").read_text(encoding="utf-8")
    headings = {line[3:].strip() for line in text.splitlines() if line.startswith("## ")}
    assert {h for h, _ in CAUTIONS} == headings


def test_draft_mark_mentions_licensed_engineer():
    assert "licensed professional engineer" in DRAFT_MARK
    assert "not for construction" in DRAFT_MARK
