"""The README's first command, end to end: `scorecard demo` runs every stage and its own audit passes."""

import json

from click.testing import CliRunner

from scorecard.cli import main
from scorecard.sheet import load_sheet


def test_demo_runs_the_whole_pipeline_and_its_audit_passes(tmp_path):
    out = tmp_path / "demo"
    result = CliRunner().invoke(main, ["demo", "-o", str(out), "--rows", "20000"])
    assert result.exit_code == 0, result.output
    written = {p.name for p in out.iterdir()}
    assert {"cohort.csv", "audit-cohort.csv", "true.model.json", "fitted.model.json", "declared.model.json",
            "edited.model.json", "review.pdf", "sheet.json", "sheet.pdf", "check-report.pdf",
            "check-report.json"} <= written
    assert (out / "sheet.pdf").read_bytes().startswith(b"%PDF")
    assert sorted(p.suffix for p in (out / "sheet-previews").iterdir()) == [".png"] * len(list((out / "sheet-previews").iterdir()))
    # the review caught the care-process trap, and the edit recorded why it was removed
    assert "protective_care_marker" in result.output
    edits = json.loads((out / "edited.model.json").read_text())["provenance"]["edits"]
    assert [e["action"] for e in edits].count("remove_effect") == 1
    # the sheet left the care-process flag off, and verify read every printed cell back
    sheet = load_sheet(out / "sheet.json")
    assert "geriatric_review" not in {t["name"] for t in sheet["terms"]}
    assert "all match" in result.output
    report = json.loads((out / "check-report.json").read_text())
    assert report and "every bound set on this sheet passes" in result.output and "not bounded" in result.output
