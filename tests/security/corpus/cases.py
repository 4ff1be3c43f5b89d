"""The hostile corpus as a table: study files, the tables they come with, the Python forms.

Each case is a file in ``studies/`` whose header says what it tries and what must
happen (see README.md). This module reads those headers, lays out a case in a
folder (study file, table, sentinel folder) and checks the sentinels afterwards.
"""

from __future__ import annotations

import hashlib
import os
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

HERE = Path(__file__).parent
STUDIES = HERE / "studies"
PACKAGES = HERE / "pkg"
SECRET = "API_TOKEN=do-not-leak-123\nPASSWORD=hunter2\n"


@dataclass(frozen=True)
class Case:
    """One hostile study file."""

    name: str
    tries: str
    expect: str  # "harmless" or the text the one-line refusal must contain
    table: str = "plain"
    routes: tuple[str, ...] = ("plan", "run")
    text: str = field(default="", repr=False)

    @property
    def refused(self) -> bool:
        return self.expect != "harmless"


def _header(text: str) -> dict[str, str]:
    out: dict[str, str] = {}
    for line in text.splitlines():
        if not line.startswith("# "):
            break
        key, _, value = line[2:].partition(":")
        out[key.strip()] = value.strip()
    return out


def load_cases() -> list[Case]:
    cases = []
    for path in sorted(STUDIES.glob("*.yaml")):
        text = path.read_text(encoding="utf-8")
        head = _header(text)
        expect = head["expect"]
        expect = (
            expect.removeprefix("refused:").strip()
            if expect.startswith("refused:")
            else expect
        )
        cases.append(
            Case(
                name=path.stem,
                tries=head["tries"],
                expect=expect,
                table=head.get("table", "plain"),
                routes=tuple(head.get("routes", "plan run").split()),
                text=text,
            )
        )
    return cases


# --------------------------------------------------------------------- tables
def plain_table(n: int = 40) -> pd.DataFrame:
    rng = np.random.default_rng(0)
    y = np.tile([0, 1], n // 2)
    X = rng.normal(size=(n, 3)).round(4)
    X[:, 0] += y
    return pd.DataFrame({"f1": X[:, 0], "f2": X[:, 1], "f3": X[:, 2], "y": y})


def _plain(folder: Path, sentinel: Path) -> None:
    plain_table().to_csv(folder / "table.csv", index=False)


def _positive(folder: Path, sentinel: Path) -> None:
    df = plain_table()
    df[["f1", "f2", "f3"]] = df[["f1", "f2", "f3"]].abs()
    df.to_csv(folder / "table.csv", index=False)


def _paths(folder: Path, sentinel: Path) -> None:
    df = plain_table()
    df["doc"] = [str(sentinel / "secret.txt")] * len(df)
    df.to_csv(folder / "table.csv", index=False)


def _environ_link(folder: Path, sentinel: Path) -> None:
    (folder / "table.csv").symlink_to("/proc/self/environ")


def _fifo(folder: Path, sentinel: Path) -> None:
    os.mkfifo(folder / "table.csv")


def _secret_link(folder: Path, sentinel: Path) -> None:
    (folder / "link.csv").symlink_to(sentinel / "secret.txt")


def _folder(folder: Path, sentinel: Path) -> None:
    (folder / "sub").mkdir()
    _plain(folder, sentinel)


def _escapes(folder: Path, sentinel: Path) -> None:
    df = plain_table()
    df.columns = ["\x1b[2J\x1b[31mred", "line\nbreak", "\u202eevil", "y"]
    df.to_csv(folder / "table.csv", index=False)


def _escape_features(folder: Path, sentinel: Path) -> None:
    df = plain_table()
    df.columns = ["\x1b[31mred\x1b[0m", "b\x1b]0;title\x07", "f3", "y"]
    df.to_csv(folder / "table.csv", index=False)


def _wide(folder: Path, sentinel: Path) -> None:
    n = 200_000
    header = ",".join(f"c{i}" for i in range(n)) + ",y\n"
    row = ",".join(["0"] * n) + ",1\n"
    (folder / "table.csv").write_text(header + row + row.replace(",1\n", ",0\n"))


TABLES: dict[str, Callable[[Path, Path], None]] = {
    "plain": _plain,
    "positive": _positive,
    "paths": _paths,
    "environ_link": _environ_link,
    "fifo": _fifo,
    "secret_link": _secret_link,
    "folder": _folder,
    "escapes": _escapes,
    "escape_features": _escape_features,
    "wide": _wide,
}


# ---------------------------------------------------------------- sentinels
@dataclass(frozen=True)
class Layout:
    """A case laid out on disk: ``root/study/`` holds the study and its table,
    ``root/sentinel/`` holds a secret, ``root/run`` is the run folder."""

    root: Path
    study_dir: Path
    sentinel: Path
    sentinel_file: Path
    study: Path
    out: Path

    def snapshot(self) -> dict[str, str]:
        """Every file under the sentinel folder with the SHA-256 of its bytes."""
        return {
            str(p.relative_to(self.sentinel)): hashlib.sha256(
                p.read_bytes()
            ).hexdigest()
            if p.is_file()
            else "dir"
            for p in sorted(self.sentinel.rglob("*"))
        }


def lay_out(case: Case, root: Path) -> Layout:
    study_dir = root / "study"
    sentinel = root / "sentinel"
    study_dir.mkdir(parents=True)
    sentinel.mkdir()
    (sentinel / "secret.txt").write_text(SECRET)
    sentinel_file = sentinel / "created-by-attack"
    TABLES[case.table](study_dir, sentinel)
    text = case.text.replace("@DIR@", str(sentinel)).replace(
        "@FILE@", str(sentinel_file)
    )
    study = study_dir / "study.yaml"
    study.write_text(text, encoding="utf-8")
    return Layout(
        root=root,
        study_dir=study_dir,
        sentinel=sentinel,
        sentinel_file=sentinel_file,
        study=study,
        out=root / "run",
    )


# ------------------------------------------------------------- Python forms
def wrap_forms(sentinel: Path) -> dict[str, Callable[[], dict[str, Any]]]:
    """For cases that apply to ``foldwall.wrap``: the keyword arguments of the same attempt."""
    from sklearn.cluster import FeatureAgglomeration
    from sklearn.compose import ColumnTransformer
    from sklearn.feature_extraction.text import CountVectorizer
    from sklearn.feature_selection import SelectKBest, mutual_info_classif
    from sklearn.linear_model import LogisticRegression
    from sklearn.pipeline import FeatureUnion, Pipeline
    from sklearn.preprocessing import StandardScaler

    cache = str(sentinel / "cache")

    def agg_pipe(**kw: Any) -> Pipeline:
        return Pipeline(
            [
                ("agg", FeatureAgglomeration(n_clusters=2, **kw)),
                ("model", LogisticRegression()),
            ]
        )

    return {
        "memory_with_agglomeration": lambda: {"pipeline": agg_pipe(memory=cache)},
        "memory_in_space": lambda: {
            "pipeline": agg_pipe(),
            "space": {"agg__memory": [cache]},
        },
        "memory_nested_key": lambda: {
            "pipeline": Pipeline(
                [
                    ("pipe", Pipeline([("scale", StandardScaler())])),
                    ("model", LogisticRegression()),
                ]
            ),
            "space": {"pipe__memory": [cache]},
        },
        "memory_deep_nested_key": lambda: {
            "pipeline": Pipeline(
                [
                    (
                        "union",
                        FeatureUnion(
                            [
                                (
                                    "inner",
                                    Pipeline(
                                        [("agg", FeatureAgglomeration(n_clusters=2))]
                                    ),
                                )
                            ]
                        ),
                    ),
                    ("model", LogisticRegression()),
                ]
            ),
            "space": {"union__inner__agg__memory": [cache]},
        },
        "vectorizer_reads_files": lambda: {
            "pipeline": Pipeline(
                [
                    (
                        "cols",
                        ColumnTransformer(
                            [("vec", CountVectorizer(input="filename"), "doc")]
                        ),
                    ),
                    ("model", LogisticRegression()),
                ]
            )
        },
        "vectorizer_reads_files_space": lambda: {
            "pipeline": Pipeline(
                [
                    ("cols", ColumnTransformer([("vec", CountVectorizer(), "doc")])),
                    ("model", LogisticRegression()),
                ]
            ),
            "space": {"cols__vec__input": ["content", "file"]},
        },
        "harmless_score_func": lambda: {
            "pipeline": Pipeline(
                [
                    ("k", SelectKBest(mutual_info_classif, k=2)),
                    ("model", LogisticRegression()),
                ]
            )
        },
    }
