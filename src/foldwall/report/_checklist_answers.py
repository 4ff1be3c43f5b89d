"""How the run answers each reporting-checklist item: one function per item kind.

Each function takes the :class:`ReportInput` and returns an :class:`Answer`: the
status, the evidence from this run, and the report section that shows it.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

from ._sections import ReportInput, fmt

FROM_RUN = "from this run"
PARTLY = "partly from this run"
FOR_AUTHORS = "for the authors to state"


@dataclass(frozen=True)
class Answer:
    """How the run answers an item: ``status``, the evidence, and the section showing it."""

    status: str
    evidence: str
    section: str | None = None


def authors(note: str = "") -> Callable[[ReportInput], Answer]:
    def f(inp: ReportInput) -> Answer:
        return Answer(FOR_AUTHORS, note)

    return f


# ------------------------------------------------------------ answers


def _data(inp: ReportInput) -> Mapping[str, Any]:
    return inp.results.get("data") or {}


def dataset(inp: ReportInput) -> Answer:
    d = _data(inp)
    return Answer(
        PARTLY,
        f"table {d.get('table') or '(arrays from Python)'}, {d.get('n_samples')} rows, sha256 "
        f"{str(d.get('sha256') or '-')[:12]}... (full hash in the section); a link or DOI is for the "
        f"authors",
        "study-and-data",
    )


def code(inp: ReportInput) -> Answer:
    env = inp.results.get("environment")
    ver = env.get("foldwall") if isinstance(env, Mapping) else None
    st = inp.results.get("study") or {}
    return Answer(
        PARTLY,
        f"foldwall {ver or '(version in results.json)'} ran the study file "
        f"{st.get('file') or '(study from Python)'}; where the authors' own code lives is for them to "
        f"state",
        "reproducibility",
    )


def environment(inp: ReportInput) -> Answer:
    env = inp.results.get("environment")
    if isinstance(env, Mapping) and env.get("python"):
        return Answer(
            FROM_RUN,
            f"Python {env.get('python')} on {env.get('platform')}, with the library versions "
            f"listed",
            "reproducibility",
        )
    return Answer(PARTLY, "the library versions are in results.json", "reproducibility")


def instructions(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        "the command that reproduces the run and the command that rebuilds this report are given; "
        "a README for the whole paper is for the authors",
        "reproducibility",
    )


def script(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        "one command reproduces every number of this run from the study file and the table",
        "reproducibility",
    )


def outcome(inp: ReportInput) -> Answer:
    d = _data(inp)
    if d.get("classes"):
        counts = ", ".join(f"'{k}': {v}" for k, v in d["classes"].items())
        return Answer(
            FROM_RUN,
            f"target '{d.get('target')}' with class counts {counts}",
            "study-and-data",
        )
    return Answer(
        PARTLY,
        f"target '{d.get('target')}' ({d.get('task')}); its distribution is for the authors",
        "study-and-data",
    )


def exclusions(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        f"the run used all {_data(inp).get('n_samples')} rows of the table it was given; rows "
        f"removed before that, and why, are for the authors",
        "study-and-data",
    )


def steps(inp: ReportInput) -> Answer:
    steps = sorted(
        {
            n
            for c in inp.plan.get("candidates") or []
            for n, _ in c.get("steps", [])[:-1]
        }
    )
    inside = (
        f"steps fitted inside every training part: {', '.join(steps)}"
        if steps
        else "no steps before the model"
    )
    return Answer(
        PARTLY,
        f"{inside}; transformations made before the table was written are for the authors",
        "plan",
    )


def models(inp: ReportInput) -> Answer:
    cands = [f"{c['name']} ({c.get('role')})" for c in inp.plan.get("candidates") or []]
    return Answer(
        FROM_RUN,
        "every pipeline with its steps and search space: " + ", ".join(cands),
        "plan",
    )


def evaluation(inp: ReportInput) -> Answer:
    rp = inp.results.get("plan") or {}
    o, i = rp.get("outer") or {}, rp.get("inner") or {}
    return Answer(
        FROM_RUN,
        f"nested cross-validation: {o.get('folds')} outer folds x {o.get('repeats', 1)} "
        f"repeat(s) ({o.get('splitter')}), {i.get('folds')} inner folds ({i.get('splitter')}); "
        f"fold sizes listed",
        "plan",
    )


def selection(inp: ReportInput) -> Answer:
    return Answer(
        FROM_RUN,
        f"inside each outer fold the inner search chose the settings and the candidate by "
        f"{inp.metric}; the headline estimates this whole procedure, not one fold's model",
        "settings",
    )


def tuning(inp: ReportInput) -> Answer:
    s = (inp.results.get("plan") or {}).get("search") or {}
    return Answer(
        FROM_RUN,
        f"search {s.get('method')}"
        + (f" with {s.get('trials')} trials" if s.get("trials") else "")
        + "; spaces, chosen settings per fold and range-edge notes shown",
        "settings",
    )


def baselines(inp: ReportInput) -> Answer:
    bases = [
        c["name"]
        for c in inp.plan.get("candidates") or []
        if c.get("role") == "baseline"
    ]
    ref = inp.results.get("reference") or {}
    chance = (
        f"chance reference '{ref.get('name')}' scored {fmt((ref.get('score') or {}).get('mean'))}"
        if ref
        else ""
    )
    if bases:
        return Answer(
            PARTLY,
            f"baselines {', '.join(bases)} searched on the same splits; {chance}; whether they are "
            f"the right baselines is for the authors",
            "comparisons",
        )
    return Answer(
        PARTLY,
        f"no baseline in this study; {chance or 'no chance reference'}",
        "headline",
    )


def leakage(inp: ReportInput) -> Answer:
    a = inp.results.get("audit") or {}
    return Answer(
        FROM_RUN,
        f"row audit: {a.get('test_rows_seen')} outer-test rows and {a.get('validation_rows_seen')} "
        f"inner-validation rows reached any of {a.get('fits')} step fits",
        "row-audit",
    )


def dependence(inp: ReportInput) -> Answer:
    d = _data(inp)
    a = inp.results.get("audit") or {}
    dup = f"{a.get('duplicate_rows', '-')} rows have an identical twin"
    if d.get("groups"):
        return Answer(
            PARTLY,
            f"rows grouped by '{d['groups']}' ({d.get('n_groups')} groups) never straddle a split; "
            f"{dup}; other dependence is for the authors",
            "study-and-data",
        )
    return Answer(
        PARTLY,
        f"no group column: rows were treated as independent; {dup}; whether they are is for the "
        f"authors",
        "study-and-data",
    )


def metrics(inp: ReportInput) -> Answer:
    ms = (inp.results.get("plan") or {}).get("metrics") or [inp.metric]
    return Answer(
        PARTLY,
        f"metrics {', '.join(ms)}; {ms[0]} chose the settings; why it suits the question is for "
        f"the authors",
        "headline",
    )


def uncertainty(inp: ReportInput) -> Answer:
    sc = inp.results["score"]
    return Answer(
        FROM_RUN,
        f"95% interval {fmt((sc.get('ci') or [None])[0])} to "
        f"{fmt((sc.get('ci') or [None, None])[1])} ({sc.get('ci_method', '')}); bootstrap "
        f"interval and per-fold spread shown",
        "headline",
    )


def tests(inp: ReportInput) -> Answer:
    bits = []
    if inp.results.get("comparisons"):
        bits.append(
            "corrected resampled t-test for paired comparisons (overlapping training sets accounted for), "
            "with adjusted p-values"
        )
    if inp.results.get("control"):
        bits.append("permutation test of the whole procedure, p = (b + 1)/(m + 1)")
    if not bits:
        return Answer(FROM_RUN, "no statistical test was run in this study", "headline")
    return Answer(
        FROM_RUN,
        "; ".join(bits),
        "comparisons" if inp.results.get("comparisons") else "control",
    )


def external(inp: ReportInput) -> Answer:
    return Answer(
        FOR_AUTHORS,
        "this run is internal validation only; it shows nothing about other sites, devices "
        "or periods",
        "cautions",
    )


def sample_size(inp: ReportInput) -> Answer:
    d = _data(inp)
    counts = ", ".join(f"'{k}': {v}" for k, v in (d.get("classes") or {}).items())
    return Answer(
        PARTLY,
        f"{d.get('n_samples')} rows"
        + (f" ({counts})" if counts else "")
        + "; how the size was arrived at is for the authors",
        "study-and-data",
    )


def missing(inp: ReportInput) -> Answer:
    steps = [
        est
        for c in inp.plan.get("candidates") or []
        for _, est in c.get("steps", [])
        if "Imputer" in str(est)
    ]
    if steps:
        return Answer(
            PARTLY,
            f"missing values filled inside each training part ({steps[0]}); how much was missing is "
            f"for the authors",
            "plan",
        )
    return Answer(FOR_AUTHORS, "no imputation step in the pipelines")


def clusters(inp: ReportInput) -> Answer:
    d = _data(inp)
    if d.get("groups"):
        return Answer(
            PARTLY,
            f"'{d['groups']}' kept whole within folds; performance per cluster is for the authors",
            "study-and-data",
        )
    return Answer(FOR_AUTHORS, "no cluster column in this study")


def measures(inp: ReportInput) -> Answer:
    ms = (inp.results.get("plan") or {}).get("metrics") or [inp.metric]
    comp = (
        "; paired comparisons with baselines shown"
        if inp.results.get("comparisons")
        else ""
    )
    return Answer(
        PARTLY,
        f"metrics {', '.join(ms)}{comp}; their rationale is for the authors",
        "headline",
    )


def imbalance(inp: ReportInput) -> Answer:
    d = _data(inp)
    if d.get("classes"):
        counts = ", ".join(f"'{k}': {v}" for k, v in d["classes"].items())
        return Answer(
            PARTLY,
            f"class counts {counts}; outer folds stratified by class: "
            f"{fmt(((inp.results.get('plan') or {}).get('outer') or {}).get('stratified'))}; any "
            f"re-weighting is in the pipeline steps",
            "study-and-data",
        )
    return Answer(FOR_AUTHORS, "not a classification study")


def output(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        "predicted labels are each model's own predict(); decision values are in predictions.csv; "
        "any clinical threshold is for the authors",
        "predictions",
    )


def counts(inp: ReportInput) -> Answer:
    return Answer(
        FROM_RUN, "rows and classes in every outer training and test part", "plan"
    )


def full_model(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        "the run estimates a procedure, not one fitted model; the model to share is the same "
        "procedure run on all rows",
        "headline",
    )


def performance(inp: ReportInput) -> Answer:
    sc = inp.results["score"]
    return Answer(
        FROM_RUN,
        f"{inp.metric} {fmt(sc['mean'])} (95% {fmt((sc.get('ci') or [None])[0])} to "
        f"{fmt((sc.get('ci') or [None, None])[1])}); subgroups are for the authors",
        "headline",
    )


def heterogeneity(inp: ReportInput) -> Answer:
    sc = inp.results["score"]
    return Answer(
        PARTLY,
        f"spread over outer folds: sd {fmt(sc.get('sd'))}, from {fmt(sc.get('min'))} to "
        f"{fmt(sc.get('max'))}",
        "folds",
    )


def limitations(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY, "the run states what internal validation does not show", "cautions"
    )


def code_sharing(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        "the foldwall version and the command are given; where the code is shared is for the "
        "authors",
        "reproducibility",
    )


def objectives(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        "this run is the development of a prediction procedure with internal validation (nested "
        "cross-validation); the objectives are for the authors",
        "plan",
    )


def flow(inp: ReportInput) -> Answer:
    d = _data(inp)
    return Answer(
        PARTLY,
        f"{d.get('n_samples')} rows analysed; how participants came to these rows is for the authors",
        "study-and-data",
    )


def outcome_def(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        f"the outcome is the column '{_data(inp).get('target')}'; how and when it was assessed is "
        f"for the authors",
        "study-and-data",
    )


def predictors(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        f"{_data(inp).get('n_features')} input columns (listed in the plan); their definitions are "
        f"for the authors",
        "plan",
    )


def data_use(inp: ReportInput) -> Answer:
    return evaluation(inp)


def handling(inp: ReportInput) -> Answer:
    return steps(inp)


def building(inp: ReportInput) -> Answer:
    s = (inp.results.get("plan") or {}).get("search") or {}
    return Answer(
        FROM_RUN,
        f"pipelines and search spaces listed; search {s.get('method')}; internal validation by "
        f"nested cross-validation",
        "plan",
    )
