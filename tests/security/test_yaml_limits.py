"""The study-file YAML loader: size, depth and alias limits end in one line, quickly."""

from __future__ import annotations

import os
import time

import pytest

from foldwall.exceptions import SpecError
from foldwall.spec._yaml import YamlLimits, load_yaml, read_study_text

WHERE = "study file 's.yaml'"


def _refused(text: str, match: str, **kw) -> str:
    t0 = time.perf_counter()
    with pytest.raises(SpecError, match=match) as info:
        load_yaml(text, where=WHERE, **kw)
    assert time.perf_counter() - t0 < 2.0
    msg = str(info.value)
    assert len(msg.splitlines()) == 1
    return msg


def test_alias_bomb_is_refused_by_counting_not_by_building():
    lol = "a0: &a0 [x, x, x, x, x, x, x, x, x, x]\n" + "".join(
        f"a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 10) + "]\n" for i in range(1, 10)
    )
    msg = _refused(lol, "expands to more than 100000 values")
    assert "*a" in msg  # names an alias that repeats values


def test_self_referencing_alias_is_one_line_not_recursion_error():
    _refused("a: &a [1, *a]\n", r"alias \*a at line 1 .* cannot contain itself")
    _refused("a: &m {b: {c: *m}}\n", "cannot contain itself")


@pytest.mark.parametrize("opener,closer", [("[", "]"), ("{a: ", "}")])
def test_five_thousand_nested_levels_are_one_line(opener, closer):
    text = "a: " + opener * 5000 + ("1" if opener != "[" else "") + closer * 5000
    _refused(text, "deep|nesting")


def test_depth_limit_is_configurable_and_names_it():
    _refused(
        "a: [[[[1]]]]\n", "more than 3 levels deep", limits=YamlLimits(max_depth=3)
    )
    assert load_yaml("a: [[[1]]]\n", limits=YamlLimits(max_depth=4)) == {"a": [[[1]]]}


def test_sixty_megabyte_value_is_refused_by_size_before_parsing():
    text = "a: '" + "x" * 60_000_000 + "'"
    msg = _refused(text, r"is 60\.0 MB; a study file may be at most 1\.0 MB")
    assert WHERE in msg


def test_file_size_is_checked_before_reading(tmp_path):
    p = tmp_path / "big.yaml"
    with open(p, "wb") as fh:
        fh.truncate(5_000_000)  # sparse: a large size without writing it
    with pytest.raises(
        SpecError, match=r"is 5\.0 MB; a study file may be at most 1\.0 MB"
    ):
        read_study_text(p)


def test_study_file_must_be_a_regular_file(tmp_path):
    fifo = tmp_path / "study.yaml"
    os.mkfifo(fifo)
    t0 = time.perf_counter()
    with pytest.raises(SpecError, match="not a regular file"):
        read_study_text(fifo)  # opened without blocking, although no one writes to it
    assert time.perf_counter() - t0 < 2.0
    with pytest.raises(SpecError, match="is a folder"):
        read_study_text(tmp_path)
    with pytest.raises(SpecError, match="does not exist"):
        read_study_text(tmp_path / "missing.yaml")


def test_non_utf8_study_file_is_one_line(tmp_path):
    p = tmp_path / "s.yaml"
    p.write_bytes(b"a: \xff\xfe\n")
    with pytest.raises(SpecError, match="not UTF-8 text"):
        read_study_text(p)


def test_huge_integer_is_one_line():
    _refused("seed: " + "9" * 5000 + "\n", "thousands of digits")


def test_python_tags_build_nothing():
    _refused("a: !!python/object/apply:os.system ['echo hi']\n", "not valid YAML")
    _refused("a: !!python/name:os.system\n", "not valid YAML")


def test_duplicate_keys_are_refused_with_their_line():
    _refused(
        "use: a\nname: b\nuse: c\n",
        r"key 'use' appears twice in one mapping \(line 3\)",
    )


def test_control_characters_are_escaped_in_messages():
    msg = _refused("a: \x1b[31mred\n", "not valid YAML")
    assert "\x1b" not in msg


def test_plain_study_yaml_loads_with_yaml12_floats_and_merge_keys():
    got = load_yaml("a: [1e-3, 2]\nb: &x {c: 1}\nd: *x\nm: {<<: *x, e: 2}\n")
    assert got == {"a": [0.001, 2], "b": {"c": 1}, "d": {"c": 1}, "m": {"c": 1, "e": 2}}


def test_honest_aliases_within_the_limit_load():
    text = (
        "a: &a ["
        + ", ".join(["1"] * 100)
        + "]\n"
        + "".join(f"b{i}: *a\n" for i in range(50))
    )
    assert len(load_yaml(text)) == 51
