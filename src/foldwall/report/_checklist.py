"""A reporting checklist answered from the run where the run can answer it.

Items of REFORMS (Kapoor et al. 2024, *Science Advances* 10(18):eadk3452) and, for
studies marked clinical, of TRIPOD+AI (Collins et al. 2024, *BMJ* 385:e078378),
cited by item number. The short topics are our own wording, never the
checklists' text: a reader checks each item against the published checklist.
Each item is answered from the run (evidence and the section that shows it),
partly answered, or left "for the authors to state".
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

from ._document import Section, Subheading, Table, Text
from ._sections import ReportInput, fmt, register_section, section_title

__all__ = [
    "REFORMS_ITEMS",
    "TRIPOD_AI_ITEMS",
    "Answer",
    "ChecklistItem",
    "answer_items",
    "checklist_section",
]

FROM_RUN = "from this run"
PARTLY = "partly from this run"
FOR_AUTHORS = "for the authors to state"


@dataclass(frozen=True)
class Answer:
    """How the run answers an item: ``status``, the evidence, and the section showing it."""

    status: str
    evidence: str
    section: str | None = None


@dataclass(frozen=True)
class ChecklistItem:
    """One checklist item: guideline, item number, our own short topic, how to answer it.

    ``number_checked`` records whether the item number was checked against a
    public copy of the checklist (the others follow the published numbering as
    recalled; confirm them before citing this table elsewhere).
    """

    guideline: str
    number: str
    topic: str
    answer: Callable[[ReportInput], Answer] | None = None
    number_checked: bool = False


def _authors(note: str = "") -> Callable[[ReportInput], Answer]:
    def f(inp: ReportInput) -> Answer:
        return Answer(FOR_AUTHORS, note)

    return f


# ------------------------------------------------------------ answers


def _data(inp: ReportInput) -> Mapping[str, Any]:
    return inp.results.get("data") or {}


def _dataset(inp: ReportInput) -> Answer:
    d = _data(inp)
    return Answer(
        PARTLY,
        f"table {d.get('table') or '(arrays from Python)'}, {d.get('n_samples')} rows, sha256 "
        f"{str(d.get('sha256') or '-')[:12]}... (full hash in the section); a link or DOI is for the "
        f"authors",
        "study-and-data",
    )


def _code(inp: ReportInput) -> Answer:
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


def _environment(inp: ReportInput) -> Answer:
    env = inp.results.get("environment")
    if isinstance(env, Mapping) and env.get("python"):
        return Answer(
            FROM_RUN,
            f"Python {env.get('python')} on {env.get('platform')}, with the library versions "
            f"listed",
            "reproducibility",
        )
    return Answer(PARTLY, "the library versions are in results.json", "reproducibility")


def _instructions(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        "the command that reproduces the run and the command that rebuilds this report are given; "
        "a README for the whole paper is for the authors",
        "reproducibility",
    )


def _script(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        "one command reproduces every number of this run from the study file and the table",
        "reproducibility",
    )


def _outcome(inp: ReportInput) -> Answer:
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


def _exclusions(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        f"the run used all {_data(inp).get('n_samples')} rows of the table it was given; rows "
        f"removed before that, and why, are for the authors",
        "study-and-data",
    )


def _steps(inp: ReportInput) -> Answer:
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


def _models(inp: ReportInput) -> Answer:
    cands = [f"{c['name']} ({c.get('role')})" for c in inp.plan.get("candidates") or []]
    return Answer(
        FROM_RUN,
        "every pipeline with its steps and search space: " + ", ".join(cands),
        "plan",
    )


def _evaluation(inp: ReportInput) -> Answer:
    rp = inp.results.get("plan") or {}
    o, i = rp.get("outer") or {}, rp.get("inner") or {}
    return Answer(
        FROM_RUN,
        f"nested cross-validation: {o.get('folds')} outer folds x {o.get('repeats', 1)} "
        f"repeat(s) ({o.get('splitter')}), {i.get('folds')} inner folds ({i.get('splitter')}); "
        f"fold sizes listed",
        "plan",
    )


def _selection(inp: ReportInput) -> Answer:
    return Answer(
        FROM_RUN,
        f"inside each outer fold the inner search chose the settings and the candidate by "
        f"{inp.metric}; the headline estimates this whole procedure, not one fold's model",
        "settings",
    )


def _tuning(inp: ReportInput) -> Answer:
    s = (inp.results.get("plan") or {}).get("search") or {}
    return Answer(
        FROM_RUN,
        f"search {s.get('method')}"
        + (f" with {s.get('trials')} trials" if s.get("trials") else "")
        + "; spaces, chosen settings per fold and range-edge notes shown",
        "settings",
    )


def _baselines(inp: ReportInput) -> Answer:
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


def _leakage(inp: ReportInput) -> Answer:
    a = inp.results.get("audit") or {}
    return Answer(
        FROM_RUN,
        f"row audit: {a.get('test_rows_seen')} outer-test rows and {a.get('validation_rows_seen')} "
        f"inner-validation rows reached any of {a.get('fits')} step fits",
        "row-audit",
    )


def _dependence(inp: ReportInput) -> Answer:
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


def _metrics(inp: ReportInput) -> Answer:
    ms = (inp.results.get("plan") or {}).get("metrics") or [inp.metric]
    return Answer(
        PARTLY,
        f"metrics {', '.join(ms)}; {ms[0]} chose the settings; why it suits the question is for "
        f"the authors",
        "headline",
    )


def _uncertainty(inp: ReportInput) -> Answer:
    sc = inp.results["score"]
    return Answer(
        FROM_RUN,
        f"95% interval {fmt((sc.get('ci') or [None])[0])} to "
        f"{fmt((sc.get('ci') or [None, None])[1])} ({sc.get('ci_method', '')}); bootstrap "
        f"interval and per-fold spread shown",
        "headline",
    )


def _tests(inp: ReportInput) -> Answer:
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


def _external(inp: ReportInput) -> Answer:
    return Answer(
        FOR_AUTHORS,
        "this run is internal validation only; it shows nothing about other sites, devices "
        "or periods",
        "cautions",
    )


def _sample_size(inp: ReportInput) -> Answer:
    d = _data(inp)
    counts = ", ".join(f"'{k}': {v}" for k, v in (d.get("classes") or {}).items())
    return Answer(
        PARTLY,
        f"{d.get('n_samples')} rows"
        + (f" ({counts})" if counts else "")
        + "; how the size was arrived at is for the authors",
        "study-and-data",
    )


def _missing(inp: ReportInput) -> Answer:
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


def _clusters(inp: ReportInput) -> Answer:
    d = _data(inp)
    if d.get("groups"):
        return Answer(
            PARTLY,
            f"'{d['groups']}' kept whole within folds; performance per cluster is for the authors",
            "study-and-data",
        )
    return Answer(FOR_AUTHORS, "no cluster column in this study")


def _measures(inp: ReportInput) -> Answer:
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


def _imbalance(inp: ReportInput) -> Answer:
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


def _output(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        "predicted labels are each model's own predict(); decision values are in predictions.csv; "
        "any clinical threshold is for the authors",
        "predictions",
    )


def _counts(inp: ReportInput) -> Answer:
    return Answer(
        FROM_RUN, "rows and classes in every outer training and test part", "plan"
    )


def _full_model(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        "the run estimates a procedure, not one fitted model; the model to share is the same "
        "procedure run on all rows",
        "headline",
    )


def _performance(inp: ReportInput) -> Answer:
    sc = inp.results["score"]
    return Answer(
        FROM_RUN,
        f"{inp.metric} {fmt(sc['mean'])} (95% {fmt((sc.get('ci') or [None])[0])} to "
        f"{fmt((sc.get('ci') or [None, None])[1])}); subgroups are for the authors",
        "headline",
    )


def _heterogeneity(inp: ReportInput) -> Answer:
    sc = inp.results["score"]
    return Answer(
        PARTLY,
        f"spread over outer folds: sd {fmt(sc.get('sd'))}, from {fmt(sc.get('min'))} to "
        f"{fmt(sc.get('max'))}",
        "folds",
    )


def _limitations(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY, "the run states what internal validation does not show", "cautions"
    )


def _code_sharing(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        "the foldwall version and the command are given; where the code is shared is for the "
        "authors",
        "reproducibility",
    )


def _objectives(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        "this run is the development of a prediction procedure with internal validation (nested "
        "cross-validation); the objectives are for the authors",
        "plan",
    )


def _flow(inp: ReportInput) -> Answer:
    d = _data(inp)
    return Answer(
        PARTLY,
        f"{d.get('n_samples')} rows analysed; how participants came to these rows is for the authors",
        "study-and-data",
    )


def _outcome_def(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        f"the outcome is the column '{_data(inp).get('target')}'; how and when it was assessed is "
        f"for the authors",
        "study-and-data",
    )


def _predictors(inp: ReportInput) -> Answer:
    return Answer(
        PARTLY,
        f"{_data(inp).get('n_features')} input columns (listed in the plan); their definitions are "
        f"for the authors",
        "plan",
    )


def _data_use(inp: ReportInput) -> Answer:
    return _evaluation(inp)


def _handling(inp: ReportInput) -> Answer:
    return _steps(inp)


def _building(inp: ReportInput) -> Answer:
    s = (inp.results.get("plan") or {}).get("search") or {}
    return Answer(
        FROM_RUN,
        f"pipelines and search spaces listed; search {s.get('method')}; internal validation by "
        f"nested cross-validation",
        "plan",
    )


# ------------------------------------------------------------ the items

A = _authors()

REFORMS_ITEMS: tuple[ChecklistItem, ...] = (
    ChecklistItem(
        "REFORMS", "1a", "population or distribution the claim is about", A, True
    ),
    ChecklistItem("REFORMS", "1b", "why that population was chosen", A, True),
    ChecklistItem("REFORMS", "1c", "why machine learning is used", A, True),
    ChecklistItem(
        "REFORMS", "2a", "the data set, with a persistent identifier", _dataset, True
    ),
    ChecklistItem(
        "REFORMS",
        "2b",
        "the code that produced the results, and its version",
        _code,
        True,
    ),
    ChecklistItem("REFORMS", "2c", "the computing environment", _environment, True),
    ChecklistItem(
        "REFORMS", "2d", "instructions to regenerate the results", _instructions, True
    ),
    ChecklistItem(
        "REFORMS", "2e", "a script that reproduces the results", _script, True
    ),
    ChecklistItem(
        "REFORMS",
        "3a",
        "where the data come from, when, and how labels were obtained",
        A,
        True,
    ),
    ChecklistItem("REFORMS", "3b", "the sampling frame", A, True),
    ChecklistItem("REFORMS", "3c", "why the data suit the task", A, True),
    ChecklistItem(
        "REFORMS", "3d", "the outcome and its descriptive statistics", _outcome, True
    ),
    ChecklistItem("REFORMS", "4a", "rows excluded, and why", _exclusions),
    ChecklistItem("REFORMS", "4b", "how impossible or corrupt values were handled", A),
    ChecklistItem(
        "REFORMS", "4c", "every transformation from raw data to model input", _steps
    ),
    ChecklistItem("REFORMS", "5a", "every model trained", _models),
    ChecklistItem("REFORMS", "5b", "why these kinds of model", A),
    ChecklistItem(
        "REFORMS", "5c", "how models were evaluated (splits, folds)", _evaluation
    ),
    ChecklistItem("REFORMS", "5d", "how the reported model was selected", _selection),
    ChecklistItem("REFORMS", "5e", "how settings were tuned", _tuning),
    ChecklistItem("REFORMS", "5f", "whether the baselines are appropriate", _baselines),
    ChecklistItem(
        "REFORMS",
        "6a",
        "that preprocessing and modelling used training rows only",
        _leakage,
    ),
    ChecklistItem(
        "REFORMS",
        "6b",
        "dependence and duplicates between training and test rows",
        _dependence,
    ),
    ChecklistItem("REFORMS", "6c", "that every input is legitimate for the task", A),
    ChecklistItem(
        "REFORMS", "7a", "every metric, and why the selection metric suits", _metrics
    ),
    ChecklistItem(
        "REFORMS",
        "7b",
        "uncertainty of the estimates and how it was computed",
        _uncertainty,
    ),
    ChecklistItem("REFORMS", "7c", "statistical tests and their assumptions", _tests),
    ChecklistItem("REFORMS", "8a", "evidence of external validity", _external),
    ChecklistItem("REFORMS", "8b", "where the findings are not expected to hold", A),
)

TRIPOD_AI_ITEMS: tuple[ChecklistItem, ...] = (
    ChecklistItem(
        "TRIPOD+AI",
        "1",
        "title: a prediction model study, its population and outcome",
        A,
        True,
    ),
    ChecklistItem("TRIPOD+AI", "2", "structured abstract", A, True),
    ChecklistItem("TRIPOD+AI", "3a", "health-care context and rationale", A, True),
    ChecklistItem(
        "TRIPOD+AI", "3b", "intended population, place in care and users", A, True
    ),
    ChecklistItem("TRIPOD+AI", "3c", "known inequalities between groups", A, True),
    ChecklistItem(
        "TRIPOD+AI",
        "4",
        "objectives: development, evaluation or both",
        _objectives,
        True,
    ),
    ChecklistItem(
        "TRIPOD+AI", "5a", "data sources and how representative they are", A, True
    ),
    ChecklistItem("TRIPOD+AI", "5b", "dates of accrual and follow-up", A, True),
    ChecklistItem(
        "TRIPOD+AI", "6a", "setting, number and location of centres", A, True
    ),
    ChecklistItem("TRIPOD+AI", "6b", "eligibility criteria", A, True),
    ChecklistItem("TRIPOD+AI", "6c", "treatments received", A, True),
    ChecklistItem("TRIPOD+AI", "7", "data preparation and quality checks", _steps),
    ChecklistItem(
        "TRIPOD+AI", "8a", "outcome: definition, how and when assessed", _outcome_def
    ),
    ChecklistItem("TRIPOD+AI", "8b", "who assessed the outcome", A),
    ChecklistItem("TRIPOD+AI", "8c", "blinding of outcome assessment", A),
    ChecklistItem("TRIPOD+AI", "9a", "choice of predictors", A),
    ChecklistItem("TRIPOD+AI", "9b", "definition of the predictors", _predictors),
    ChecklistItem("TRIPOD+AI", "9c", "who assessed the predictors, blinding", A),
    ChecklistItem(
        "TRIPOD+AI", "10", "sample size and how it was arrived at", _sample_size
    ),
    ChecklistItem(
        "TRIPOD+AI", "11", "missing data and how they were handled", _missing
    ),
    ChecklistItem(
        "TRIPOD+AI", "12a", "how the data were used (splits, resampling)", _data_use
    ),
    ChecklistItem("TRIPOD+AI", "12b", "how predictors were handled", _handling),
    ChecklistItem(
        "TRIPOD+AI",
        "12c",
        "model type, building, tuning and internal validation",
        _building,
    ),
    ChecklistItem(
        "TRIPOD+AI", "12d", "heterogeneity across clusters or centres", _clusters
    ),
    ChecklistItem(
        "TRIPOD+AI", "12e", "performance measures and comparisons", _measures
    ),
    ChecklistItem("TRIPOD+AI", "12f", "model updating", A),
    ChecklistItem(
        "TRIPOD+AI", "12g", "how predictions of an existing model were calculated", A
    ),
    ChecklistItem(
        "TRIPOD+AI", "13", "class imbalance and how it was handled", _imbalance
    ),
    ChecklistItem("TRIPOD+AI", "14", "fairness", A),
    ChecklistItem("TRIPOD+AI", "15", "model output and decision thresholds", _output),
    ChecklistItem(
        "TRIPOD+AI", "16", "differences between development and evaluation data", A
    ),
    ChecklistItem("TRIPOD+AI", "17", "ethics approval and consent", A),
    ChecklistItem("TRIPOD+AI", "18a", "funding", A),
    ChecklistItem("TRIPOD+AI", "18b", "conflicts of interest", A),
    ChecklistItem("TRIPOD+AI", "18c", "protocol", A),
    ChecklistItem("TRIPOD+AI", "18d", "registration", A),
    ChecklistItem("TRIPOD+AI", "18e", "data availability", A),
    ChecklistItem("TRIPOD+AI", "18f", "code availability", _code_sharing),
    ChecklistItem("TRIPOD+AI", "19", "patient and public involvement", A),
    ChecklistItem("TRIPOD+AI", "20a", "flow of participants", _flow),
    ChecklistItem("TRIPOD+AI", "20b", "characteristics of participants", A),
    ChecklistItem("TRIPOD+AI", "20c", "development and evaluation data compared", A),
    ChecklistItem(
        "TRIPOD+AI", "21", "participants and outcome events in each analysis", _counts
    ),
    ChecklistItem("TRIPOD+AI", "22", "the full model, or how to use it", _full_model),
    ChecklistItem(
        "TRIPOD+AI", "23a", "performance with confidence intervals", _performance
    ),
    ChecklistItem("TRIPOD+AI", "23b", "heterogeneity of performance", _heterogeneity),
    ChecklistItem("TRIPOD+AI", "24", "results of model updating", A),
    ChecklistItem("TRIPOD+AI", "25", "interpretation", A),
    ChecklistItem("TRIPOD+AI", "26", "limitations", _limitations),
    ChecklistItem("TRIPOD+AI", "27a", "handling of poor or missing inputs in use", A),
    ChecklistItem("TRIPOD+AI", "27b", "user interaction and expertise needed", A),
    ChecklistItem("TRIPOD+AI", "27c", "future research", A),
)


def answer_items(inp: ReportInput) -> list[tuple[ChecklistItem, Answer]]:
    """Every applicable item with its answer (TRIPOD+AI only for clinical studies)."""
    items = list(REFORMS_ITEMS) + (list(TRIPOD_AI_ITEMS) if inp.is_clinical else [])
    return [
        (it, it.answer(inp) if it.answer else Answer(FOR_AUTHORS, "")) for it in items
    ]


def checklist_section(inp: ReportInput) -> Section:
    """The reporting checklist section."""
    answered = answer_items(inp)
    clinical = inp.is_clinical
    intro = (
        "Items of REFORMS, the reporting checklist for machine-learning-based science (Kapoor et al. 2024, Science "
        "Advances 10(18):eadk3452)"
        + (
            ", and of TRIPOD+AI for clinical prediction models (Collins et al. 2024, BMJ 385:e078378), because this "
            "study is marked clinical"
            if clinical
            else ""
        )
        + ". Items are cited by number; the short topics are our own wording, not the checklists' text, so read each "
        "item in the published checklist. Where the run can answer an item, the answer and the section that shows it "
        "are given; the rest are for the authors to state."
    )
    blocks: list[Any] = [Text(intro)]
    n_run = sum(1 for _, a in answered if a.status != FOR_AUTHORS)
    blocks.append(
        Text(
            f"{n_run} of {len(answered)} items are answered at least in part by this run."
        )
    )
    for g in ("REFORMS", "TRIPOD+AI"):
        mine = [(it, a) for it, a in answered if it.guideline == g]
        rows = [
            (
                f"{g} {it.number}",
                it.topic,
                a.status,
                a.evidence or "-",
                section_title(a.section) if a.section else "-",
            )
            for it, a in mine
        ]
        if rows:
            blocks.append(Subheading(g))
            blocks.append(
                Table(
                    ("item", "topic (our wording)", "answer", "evidence", "section"),
                    tuple(rows),
                    links=tuple(a.section or "" for _, a in mine),
                )
            )
    return Section("checklist", "Reporting checklist", tuple(blocks))


register_section(
    "checklist",
    title="Reporting checklist",
    order=120,
    build=checklist_section,
    replace=True,
)
