"""The `scorecard` command as a whole: the manual, the version, and one-line usage errors (exit 2)."""

from click.testing import CliRunner

from scorecard import __version__
from scorecard.cli import PIPELINE_ORDER, main


def run(*args):
    return CliRunner().invoke(main, list(args))


def test_help_lists_every_verb_in_pipeline_order_with_the_cautions():
    result = run("--help")
    assert result.exit_code == 0
    listed = [line.split()[0] for line in result.output.split("Commands:")[1].strip().splitlines()]
    assert listed == PIPELINE_ORDER
    for caution in ("Decision support only", "clinical judgement", "associations, not causes", "fingerprint"):
        assert caution in result.output


def test_version():
    result = run("--version")
    assert result.exit_code == 0 and __version__ in result.output


def test_usage_errors_are_one_line_with_exit_2(tmp_path):
    for args in (["render", str(tmp_path / "s.json")],  # -o missing
                 ["demo", "-o", str(tmp_path / "d"), "--rows", "5"],  # out of range
                 ["no-such-verb"],
                 ["import", "no-such-source"]):
        result = run(*args)
        assert result.exit_code == 2, args
        lines = result.output.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("error: scorecard"), result.output
    assert not (tmp_path / "d").exists()
