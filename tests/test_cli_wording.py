"""What the commands print to a newcomer: risk differences in percentage points (on a sheet, "points" are sheet
points), and the same 12-character short fingerprint from every verb."""

import re

from click.testing import CliRunner

from scorecard.cli import main
from scorecard.jsondoc import pretty_text
from tests.audit.handmade import model_dict


def test_quantize_summary_speaks_percentage_points(tmp_path):
    (tmp_path / "m.model.json").write_text(pretty_text(model_dict()))
    result = CliRunner().invoke(main, ["quantize", str(tmp_path / "m.model.json"), "--bootstrap", "0",
                                       "-o", str(tmp_path / "s.sheet.json")])
    assert result.exit_code == 0, result.output
    lines = result.stderr.splitlines()
    start = next(k for k, line in enumerate(lines) if line.startswith("sheet:"))
    summary = [lines[start]] + [line for line in lines[start + 1:] if line.startswith(("achieved", "  "))]
    assert len(summary) >= 6 and any("certificate" in line for line in summary), result.stderr
    text = " ".join(summary)
    assert " pp" not in text and "percentage points" in text
    # every "points" that is not "percentage points" is about the sheet's own total
    for match in re.finditer(r"(\w+) points", text):
        assert match.group(1) in ("percentage", "total"), match.group(0)
    short = re.search(r"fingerprint ([0-9a-f]+)\)", result.stderr).group(1)
    assert len(short) == 12
