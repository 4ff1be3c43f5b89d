"""Bad ratings fail in one line that names the rater, case or label and the fix."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from foldwall.exceptions import DataError, SpecError
from foldwall.labels import (
    agreement,
    cohen_kappa,
    krippendorff_alpha,
    rating_table,
)


def _one_line(info: pytest.ExceptionInfo[BaseException]) -> str:
    text = str(info.value)
    assert "\n" not in text
    return text


def test_label_outside_the_classes_names_rater_label_and_fix():
    frame = pd.DataFrame(
        {"reader_a": ["pos", "neg", "pos"], "reader_b": ["pos", "maybe", "maybe"]}
    )
    with pytest.raises(DataError) as info:
        rating_table(frame, categories=["neg", "pos"])
    text = _one_line(info)
    assert "rater 'reader_b'" in text
    assert "'maybe' (2 cases)" in text
    assert "not one of the classes 'neg', 'pos'" in text
    assert "recode 'maybe' or add it to the classes" in text


def test_case_with_no_ratings_names_the_case():
    frame = pd.DataFrame(
        {"reader_a": [1, None, 0], "reader_b": [1, None, 1]},
        index=["c1", "c2", "c3"],
    )
    with pytest.raises(DataError, match=r"case 'c2' has no rating from any rater"):
        rating_table(frame)
    many = pd.DataFrame({"a": [None] * 5 + [1], "b": [None] * 5 + [0]})
    with pytest.raises(
        DataError, match=r"cases 0, 1, 2 and 2 more have no rating"
    ) as info:
        rating_table(many)
    _one_line(info)


def test_only_one_rater_is_refused():
    with pytest.raises(SpecError, match=r"1 rater column\(s\) \('reader_a'\)") as info:
        rating_table(pd.DataFrame({"reader_a": [0, 1, 1]}))
    assert "at least 2 raters" in _one_line(info)
    with pytest.raises(SpecError, match="at least 2 raters"):
        agreement(np.array([[0], [1]]))


def test_ordinal_text_labels_need_their_order():
    with pytest.raises(SpecError, match=r"order is unknown; pass categories") as info:
        rating_table([["mild", "severe"], ["severe", "severe"]], scale="ordinal")
    _one_line(info)


def test_interval_ratings_must_be_numbers():
    with pytest.raises(
        DataError, match=r"rater 'rater_1' gives 'high' for case 1"
    ) as info:
        rating_table([[1.0, 2.0], [3.0, "high"]], scale="interval")
    _one_line(info)


def test_shape_and_name_mistakes():
    with pytest.raises(SpecError, match="different lengths"):
        rating_table([[1, 2], [1]])
    with pytest.raises(SpecError, match="one rater per column"):
        rating_table([1, 2, 3])
    with pytest.raises(SpecError, match="rater names must be distinct"):
        rating_table([[1, 2]], raters=["a", "a"])
    with pytest.raises(SpecError, match="names 3 raters but the ratings have 2"):
        rating_table([[1, 2]], raters=["a", "b", "c"])
    with pytest.raises(SpecError, match="scale must be one of"):
        rating_table([[1, 2]], scale="ratio")


def test_bad_settings_of_the_statistics():
    with pytest.raises(
        SpecError, match="weights must be None, 'linear' or 'quadratic'"
    ):
        cohen_kappa([0, 1], [1, 1], weights="cubic")
    with pytest.raises(SpecError, match="confidence must lie strictly between 0 and 1"):
        krippendorff_alpha([[0, 1], [1, 1]], confidence=95)
    with pytest.raises(SpecError, match="n_resamples must be a whole number"):
        krippendorff_alpha([[0, 1], [1, 1]], n_resamples=-1)
    with pytest.raises(SpecError, match="level 'ordinal' needs ordered labels"):
        krippendorff_alpha([[0, 1], [1, 1]], level="ordinal")
    with pytest.raises(SpecError, match="needs numeric ratings"):
        krippendorff_alpha(
            rating_table([["a", "b"], ["b", "b"]]), level="interval", n_resamples=0
        )
