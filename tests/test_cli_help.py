"""Every verb's --help reads as a manual: it runs, and it ends with a worked example of the verb itself."""

import re

import pytest
from click.testing import CliRunner

from scorecard.cli import PIPELINE_ORDER, main

VERBS = [v for v in PIPELINE_ORDER if v != "import"] + ["import coefficients", "import shapes"]


@pytest.mark.parametrize("verb", VERBS)
def test_help_has_an_example_of_the_verb(verb):
    result = CliRunner().invoke(main, [*verb.split(), "--help"])
    assert result.exit_code == 0, result.output
    text = result.output
    assert "Example" in text, f"scorecard {verb} --help has no example"
    example = text[text.index("Example"):text.index("Options:")]
    assert f"scorecard {verb} " in example


# The old look the issue-13 audit removed (the list is issue 13's): a pair written "age x cognition" where a
# user reads it, the repeat fits called bags, and the earlier edit options. `--merge-equal-levels` (quantize's
# printing option) is not the old edit option `--merge`.
OLD_LOOK = re.compile(r"\b(age|cognition|cognitive screen)(\s+score)?\s+x\s+\w|\bbags?\b|--zero\b|--monotone\b|--clip\b|--merge\b(?!-)")


@pytest.mark.parametrize("verb", [""] + VERBS)
def test_no_help_text_keeps_the_old_look(verb):
    result = CliRunner().invoke(main, [*verb.split(), "--help"])
    assert result.exit_code == 0, result.output
    found = OLD_LOOK.search(result.output)
    assert found is None, f"scorecard {verb} --help: {found.group(0)!r}"
