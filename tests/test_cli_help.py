"""Every verb's --help reads as a manual: it runs, and it ends with a worked example of the verb itself."""

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
