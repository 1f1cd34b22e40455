"""The shape-table importer against a hand-checkable table, and its gap / overlap / row errors."""

import pandas as pd
import pytest

from scorecard.errors import UserError
from scorecard.model import contributions, predict_logodds
from scorecard.model.importers import import_shape_table

TABLE = """feature,lower,upper,level,score,label,unit,decimals
(intercept),,,,-1.6,,,
sodium,135,145,,0.0,Sodium,mmol/L,
sodium,,130,,0.55,,,
sodium,130,135,,0.2,,,
sodium,145,,,0.4,,,
sodium,,,not measured,0.1,,,
age,60,75,,-0.3,Age,years,0
age,75,85,,0.1,,,
age,85,105,,0.5,,,
residence,,,own_home,0.0,Residence,,
residence,,,with_family,0.2,,,
residence,,,care_home,0.55,,,
prior_delirium,,,no,0.0,Delirium before,,
prior_delirium,,,yes,1.1,,,
"""


@pytest.fixture
def table(tmp_path):
    path = tmp_path / "shapes.csv"
    path.write_text(TABLE)
    return path


def test_hand_checkable_table(table):
    model = import_shape_table(table, event="delirium", horizon="5 days", population="adults 60+")
    sodium = model.term("sodium")
    # rows given out of order are sorted by lower: bins (-inf,130) [130,135) [135,145) [145,inf)
    assert sodium.shape == "step" and sodium.edges == [130.0, 135.0, 145.0]
    assert sodium.scores == [0.55, 0.2, 0.0, 0.4] and sodium.missing_score == 0.1
    assert model.feature("sodium").training_range is None  # open-ended at both ends
    assert model.feature("age").training_range == {"min": 60.0, "max": 105.0}
    assert model.feature("prior_delirium").kind == "flag"
    assert model.term("prior_delirium").scores == [0.0, 1.1]
    assert model.feature("residence").levels == ["own_home", "with_family", "care_home"]
    assert model.feature("age").missing == "error" and model.feature("sodium").missing == "score"
    frame = pd.DataFrame({
        "sodium": ["129.9", "130", "", "150"],
        "age": ["60", "85", "74.9", "110"],
        "residence": ["care_home", "own_home", "with_family", "own_home"],
        "prior_delirium": ["yes", "no", "no", "1"],
    })
    logodds, report = predict_logodds(model, frame)
    # by hand: intercept + sodium + age + residence + flag
    expected = [-1.6 + 0.55 - 0.3 + 0.55 + 1.1,
                -1.6 + 0.2 + 0.5 + 0.0 + 0.0,   # 130 is an edge: upper bin; 85 likewise
                -1.6 + 0.1 - 0.3 + 0.2 + 0.0,   # sodium not measured
                -1.6 + 0.4 + 0.5 + 0.0 + 1.1]   # age 110 beyond the stated 105: last bin, reported
    assert logodds == pytest.approx(expected, abs=1e-12)
    assert report.out_of_range == {"age": 1}


def test_single_bin_and_flag_spelled_as_numbers(tmp_path):
    path = tmp_path / "s.csv"
    path.write_text("feature,lower,upper,level,score\n(intercept),,,,-1\nx,0,10,,0.25\nf,,,0,0\nf,,,1,0.7\n")
    model = import_shape_table(path)
    assert model.term("x").edges == [] and model.term("x").scores == [0.25]
    assert model.feature("f").kind == "flag"
    parts, _ = contributions(model, pd.DataFrame({"x": [3, 50], "f": ["1", "0"]}))
    assert parts["x"].tolist() == [0.25, 0.25] and parts["f"].tolist() == [0.7, 0.0]


HEADER = "feature,lower,upper,level,score\n(intercept),,,,-1\n"


@pytest.mark.parametrize(
    "body, expected",
    [
        ("x,0,10,,0.1\nx,12,20,,0.2\n", "row 3: gap in 'x': this bin starts at 12 but the bin in row 2 ends at 10"),
        ("x,0,10,,0.1\nx,8,20,,0.2\n", "row 3: overlap in 'x': this bin starts at 8 but the bin in row 2 ends at 10"),
        ("x,0,10,,0.1\nx,0,10,,0.2\n", "overlap in 'x'"),
        ("x,,10,,0.1\nx,,20,,0.2\n", "only the first bin of 'x' may have an empty lower"),
        ("x,,10,,0.1\nx,10,,,0.2\nx,20,,,0.3\n", "only the last bin of 'x' may have an empty upper"),
        ("x,10,5,,0.1\n", "row 2: lower 10 must be below upper 5"),
        ("x,0,10,,high\n", "row 2: score 'high' is not a number"),
        ("x,0,10,,\n", "row 2: score is empty"),
        ("x,a,10,,0.1\n", "row 2: lower 'a' is not a number"),
        ("x,,,,0.1\n", "row 2: give lower and/or upper for a bin"),
        ("x,0,10,,0.1\nx,,,low,0.2\n", "row 3: feature 'x' has both bins and levels"),
        ("c,,,a,0.1\nc,,,a,0.2\n", "row 3: level 'a' of 'c' is listed twice"),
        ("c,,,a,0.1\n", "row 2: feature 'c' lists one level"),
        ("x,0,10,,0.1\nx,,,not measured,0.2\nx,,,not measured,0.3\n", "row 4: feature 'x' already has a not-measured row (row 3)"),
        ("x,,,not measured,0.2\n", "feature 'x' has only a not-measured row"),
        ("x,1,2,low,0.2\n", "row 2: a row has a level and lower/upper"),
        ("bad name,0,10,,0.1\n", "row 2: 'bad name' is not usable as a feature name"),
        ("(intercept),,,,0.5\n", "row 2: a second intercept row"),
    ],
)
def test_malformed_shape_tables_name_the_row(tmp_path, body, expected):
    path = tmp_path / "s.csv"
    path.write_text(HEADER + body)
    with pytest.raises(UserError) as info:
        import_shape_table(path)
    message = str(info.value)
    assert expected in message and "\n" not in message, message
    assert message.startswith(str(path))


def test_missing_intercept_and_columns(tmp_path):
    path = tmp_path / "s.csv"
    path.write_text("feature,lower,upper,level,score\nx,0,10,,0.1\n")
    with pytest.raises(UserError, match="no intercept row"):
        import_shape_table(path)
    path.write_text("feature,from,to,score\nx,0,10,0.1\n")
    with pytest.raises(UserError, match="column 'lower' is missing"):
        import_shape_table(path)
