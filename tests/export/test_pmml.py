"""`scorecard export --format pmml` against an independent PMML engine and the standard's schema.

Outside references: jpmml-evaluator (PyPI; the JPMML engine, run on Java 17, which .ci/run installs from
Debian's default-jre-headless when `java` is missing) scores the invented demo cohort, and must give the same
total points as the audit's paper scoring (`score`) for every patient, ties and completed units included; the
document validates against the PMML 4.4 XML Schema (pmml.xsd) shipped inside jpmml-evaluator's pmml-model jar,
with lxml."""

from __future__ import annotations

import glob
import io
import os
import shutil
import zipfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from scorecard.audit.paper import score_cohort
from scorecard.cli import main
from scorecard.demo import cohort_csv_text, generate_cohort, true_model
from scorecard.export import sheet_pmml
from scorecard.jsondoc import pretty_text
from scorecard.quantize import Bound, quantize_model
from scorecard.quantize.quantizer import parse_bands
from scorecard.sheet import sheet_fingerprint
from scorecard.sheet.printed import reading_of
from tests.audit.handmade import sheet_dict

if shutil.which("java") is None and not os.environ.get("CI"):
    pytest.skip("the independent PMML engine needs Java (.ci/run installs default-jre-headless)", allow_module_level=True)

jpmml = pytest.importorskip("jpmml_evaluator") if not os.environ.get("CI") else __import__("jpmml_evaluator")


@pytest.fixture(scope="module")
def demo_sheet():
    sheet = quantize_model(true_model(), bound=Bound(max_auc_loss=0.01, max_risk_error=0.1, risk_error_share=0.05), bootstrap=0,
                           bands=parse_bands("low<10,moderate<25,high"))
    sheet["fingerprint"] = sheet_fingerprint(sheet)
    return sheet


def _cohort(n: int, seed: int) -> pd.DataFrame:
    frame = pd.read_csv(io.StringIO(cohort_csv_text(generate_cohort(n, seed=seed))), dtype=str, keep_default_na=False)
    frame.attrs["source"] = "demo cohort"
    return frame


def _with_ties(sheet: dict, frame: pd.DataFrame, seed: int = 1) -> pd.DataFrame:
    """Every continuous item of a third of the patients moved onto the hardest values: exactly half a printed
    unit past a whole one (a tie, read half up) or six tenths past it (completed units: cut down)."""
    rng = np.random.default_rng(seed)
    out = frame.copy()
    pick = rng.random(len(frame)) < 1 / 3
    for term in sheet["terms"]:
        if term["kind"] != "continuous":
            continue
        d = int(term["decimals"])
        x = pd.to_numeric(out[term["feature"]], errors="coerce").to_numpy()
        step = 10.0 ** -d
        shifted = np.round(np.round(x / step) * step + (0.6 if reading_of(term) == "completed" else 0.5) * step, d + 1)
        out.loc[pick & ~np.isnan(x), term["feature"]] = [f"{v:.{d + 1}f}" for v in shifted[pick & ~np.isnan(x)]]
    out.attrs["source"] = "demo cohort with ties"
    return out


def _engine_totals(pmml: bytes, frame: pd.DataFrame, tmp_path: Path) -> pd.DataFrame:
    path = tmp_path / "sheet.pmml"
    path.write_bytes(pmml)
    evaluator = jpmml.make_evaluator(str(path)).verify()
    typed = frame.replace({"": None})
    return evaluator.evaluateAll(typed)


def test_the_engine_gives_score_s_total_for_every_demo_patient(demo_sheet, tmp_path):
    frame = _with_ties(demo_sheet, _cohort(3000, seed=21))
    scored = score_cohort(demo_sheet, frame)
    result = _engine_totals(sheet_pmml(demo_sheet), frame, tmp_path)
    assert np.array_equal(result["total_points"].to_numpy().astype(np.int64), scored.total)
    assert np.allclose(result["risk"].to_numpy(dtype=float), scored.risk, rtol=1e-12, atol=1e-15)
    bands = [demo_sheet["bands"][i]["name"] for i in scored.band]
    assert result["band"].tolist() == bands


def test_pairs_other_rows_and_not_measured_rows(tmp_path):
    sheet = sheet_dict()  # tests/audit/handmade.py: a pair grid, an "unseen: missing" category, not-measured rows
    rng = np.random.default_rng(3)
    n = 600
    frame = pd.DataFrame({
        "age": rng.integers(55, 106, n).astype(str),
        "temperature": np.where(rng.random(n) < 0.1, "", np.round(rng.uniform(34.5, 41.0, n), 2).astype(str)),
        "cognition": np.where(rng.random(n) < 0.1, "", rng.integers(0, 11, n).astype(str)),
        "residence": rng.choice(["home", "care_home", "hospital", "ward_transfer", ""], n),
        "prior_delirium": rng.choice(["0", "1"], n),
    })
    frame.attrs["source"] = "invented"
    scored = score_cohort(sheet, frame)
    result = _engine_totals(sheet_pmml(sheet), frame, tmp_path)
    assert np.array_equal(result["total_points"].to_numpy().astype(np.int64), scored.total)


def test_the_document_validates_against_the_pmml_44_schema(demo_sheet):
    etree = pytest.importorskip("lxml.etree")
    package = Path(jpmml.__file__).parent / "dependencies"
    xsd = None
    for jar in sorted(glob.glob(str(package / "*.jar"))):
        with zipfile.ZipFile(jar) as z:
            if "pmml.xsd" in z.namelist():
                xsd = z.read("pmml.xsd")
    assert xsd is not None, "no pmml.xsd inside jpmml-evaluator's jars"
    schema = etree.XMLSchema(etree.fromstring(xsd))
    assert b'targetNamespace="http://www.dmg.org/PMML-4_4"' in xsd
    for sheet in (demo_sheet, sheet_dict()):
        doc = etree.fromstring(sheet_pmml(sheet))
        assert schema.validate(doc), schema.error_log
        header = doc.find("{http://www.dmg.org/PMML-4_4}Header")
        assert sheet["fingerprint"] in header.get("description")


def test_cli_writes_the_same_bytes_and_refuses_bad_input(tmp_path):
    sheet = sheet_dict()
    (tmp_path / "s.json").write_text(pretty_text(sheet))
    runner = CliRunner()
    for name in ("a", "b"):
        r = runner.invoke(main, ["export", str(tmp_path / "s.json"), "--format", "pmml", "-o", str(tmp_path / f"{name}.pmml")])
        assert r.exit_code == 0, r.output
    assert (tmp_path / "a.pmml").read_bytes() == (tmp_path / "b.pmml").read_bytes()
    for args, needle in ((["--format", "pdf", "-o", str(tmp_path / "c.pmml")], "pdf"),
                         (["--format", "pmml", "-o", str(tmp_path / "s.json")], "also an input"),
                         (["--format", "pmml", "-o", str(tmp_path / "no" / "c.pmml")], "does not exist")):
        r = runner.invoke(main, ["export", str(tmp_path / "s.json"), *args])
        assert r.exit_code == 2 and needle in r.output, r.output
    (tmp_path / "m.json").write_text('{"document": "scorecard-model"}')
    r = runner.invoke(main, ["export", str(tmp_path / "m.json"), "--format", "pmml", "-o", str(tmp_path / "c.pmml")])
    assert r.exit_code == 2 and "model document" in r.output
    assert not (tmp_path / "c.pmml").exists()
