"""A reporting checklist answered from the run where the run can answer it.

Items of REFORMS (Kapoor et al. 2024, *Science Advances* 10(18):eadk3452) and, for
studies marked clinical, of TRIPOD+AI (Collins et al. 2024, *BMJ* 385:e078378),
cited by item number. The short topics are our own wording, never the
checklists' text: a reader checks each item against the published checklist.
Each item is answered from the run (evidence and the section that shows it),
partly answered, or left "for the authors to state".
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from . import _checklist_answers as ans
from ._checklist_answers import FOR_AUTHORS, FROM_RUN, PARTLY, Answer
from ._document import Section, Subheading, Table, Text
from ._sections import ReportInput, register_section, section_title

__all__ = [
    "FOR_AUTHORS",
    "FROM_RUN",
    "PARTLY",
    "REFORMS_ITEMS",
    "TRIPOD_AI_ITEMS",
    "Answer",
    "ChecklistItem",
    "answer_items",
    "checklist_section",
]


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


# ------------------------------------------------------------ the items

A = ans.authors()

REFORMS_ITEMS: tuple[ChecklistItem, ...] = (
    ChecklistItem(
        "REFORMS", "1a", "population or distribution the claim is about", A, True
    ),
    ChecklistItem("REFORMS", "1b", "why that population was chosen", A, True),
    ChecklistItem("REFORMS", "1c", "why machine learning is used", A, True),
    ChecklistItem(
        "REFORMS", "2a", "the data set, with a persistent identifier", ans.dataset, True
    ),
    ChecklistItem(
        "REFORMS",
        "2b",
        "the code that produced the results, and its version",
        ans.code,
        True,
    ),
    ChecklistItem("REFORMS", "2c", "the computing environment", ans.environment, True),
    ChecklistItem(
        "REFORMS",
        "2d",
        "instructions to regenerate the results",
        ans.instructions,
        True,
    ),
    ChecklistItem(
        "REFORMS", "2e", "a script that reproduces the results", ans.script, True
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
        "REFORMS", "3d", "the outcome and its descriptive statistics", ans.outcome, True
    ),
    ChecklistItem("REFORMS", "4a", "rows excluded, and why", ans.exclusions),
    ChecklistItem("REFORMS", "4b", "how impossible or corrupt values were handled", A),
    ChecklistItem(
        "REFORMS", "4c", "every transformation from raw data to model input", ans.steps
    ),
    ChecklistItem("REFORMS", "5a", "every model trained", ans.models),
    ChecklistItem("REFORMS", "5b", "why these kinds of model", A),
    ChecklistItem(
        "REFORMS", "5c", "how models were evaluated (splits, folds)", ans.evaluation
    ),
    ChecklistItem(
        "REFORMS", "5d", "how the reported model was selected", ans.selection
    ),
    ChecklistItem("REFORMS", "5e", "how settings were tuned", ans.tuning),
    ChecklistItem(
        "REFORMS", "5f", "whether the baselines are appropriate", ans.baselines
    ),
    ChecklistItem(
        "REFORMS",
        "6a",
        "that preprocessing and modelling used training rows only",
        ans.leakage,
    ),
    ChecklistItem(
        "REFORMS",
        "6b",
        "dependence and duplicates between training and test rows",
        ans.dependence,
    ),
    ChecklistItem("REFORMS", "6c", "that every input is legitimate for the task", A),
    ChecklistItem(
        "REFORMS", "7a", "every metric, and why the selection metric suits", ans.metrics
    ),
    ChecklistItem(
        "REFORMS",
        "7b",
        "uncertainty of the estimates and how it was computed",
        ans.uncertainty,
    ),
    ChecklistItem(
        "REFORMS", "7c", "statistical tests and their assumptions", ans.tests
    ),
    ChecklistItem("REFORMS", "8a", "evidence of external validity", ans.external),
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
        ans.objectives,
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
    ChecklistItem("TRIPOD+AI", "7", "data preparation and quality checks", ans.steps),
    ChecklistItem(
        "TRIPOD+AI", "8a", "outcome: definition, how and when assessed", ans.outcome_def
    ),
    ChecklistItem("TRIPOD+AI", "8b", "who assessed the outcome", A),
    ChecklistItem("TRIPOD+AI", "8c", "blinding of outcome assessment", A),
    ChecklistItem("TRIPOD+AI", "9a", "choice of predictors", A),
    ChecklistItem("TRIPOD+AI", "9b", "definition of the predictors", ans.predictors),
    ChecklistItem("TRIPOD+AI", "9c", "who assessed the predictors, blinding", A),
    ChecklistItem(
        "TRIPOD+AI", "10", "sample size and how it was arrived at", ans.sample_size
    ),
    ChecklistItem(
        "TRIPOD+AI", "11", "missing data and how they were handled", ans.missing
    ),
    ChecklistItem(
        "TRIPOD+AI", "12a", "how the data were used (splits, resampling)", ans.data_use
    ),
    ChecklistItem("TRIPOD+AI", "12b", "how predictors were handled", ans.handling),
    ChecklistItem(
        "TRIPOD+AI",
        "12c",
        "model type, building, tuning and internal validation",
        ans.building,
    ),
    ChecklistItem(
        "TRIPOD+AI", "12d", "heterogeneity across clusters or centres", ans.clusters
    ),
    ChecklistItem(
        "TRIPOD+AI", "12e", "performance measures and comparisons", ans.measures
    ),
    ChecklistItem("TRIPOD+AI", "12f", "model updating", A),
    ChecklistItem(
        "TRIPOD+AI", "12g", "how predictions of an existing model were calculated", A
    ),
    ChecklistItem(
        "TRIPOD+AI", "13", "class imbalance and how it was handled", ans.imbalance
    ),
    ChecklistItem("TRIPOD+AI", "14", "fairness", A),
    ChecklistItem(
        "TRIPOD+AI", "15", "model output and decision thresholds", ans.output
    ),
    ChecklistItem(
        "TRIPOD+AI", "16", "differences between development and evaluation data", A
    ),
    ChecklistItem("TRIPOD+AI", "17", "ethics approval and consent", A),
    ChecklistItem("TRIPOD+AI", "18a", "funding", A),
    ChecklistItem("TRIPOD+AI", "18b", "conflicts of interest", A),
    ChecklistItem("TRIPOD+AI", "18c", "protocol", A),
    ChecklistItem("TRIPOD+AI", "18d", "registration", A),
    ChecklistItem("TRIPOD+AI", "18e", "data availability", A),
    ChecklistItem("TRIPOD+AI", "18f", "code availability", ans.code_sharing),
    ChecklistItem("TRIPOD+AI", "19", "patient and public involvement", A),
    ChecklistItem("TRIPOD+AI", "20a", "flow of participants", ans.flow),
    ChecklistItem("TRIPOD+AI", "20b", "characteristics of participants", A),
    ChecklistItem("TRIPOD+AI", "20c", "development and evaluation data compared", A),
    ChecklistItem(
        "TRIPOD+AI",
        "21",
        "participants and outcome events in each analysis",
        ans.counts,
    ),
    ChecklistItem(
        "TRIPOD+AI", "22", "the full model, or how to use it", ans.full_model
    ),
    ChecklistItem(
        "TRIPOD+AI", "23a", "performance with confidence intervals", ans.performance
    ),
    ChecklistItem(
        "TRIPOD+AI", "23b", "heterogeneity of performance", ans.heterogeneity
    ),
    ChecklistItem("TRIPOD+AI", "24", "results of model updating", A),
    ChecklistItem("TRIPOD+AI", "25", "interpretation", A),
    ChecklistItem("TRIPOD+AI", "26", "limitations", ans.limitations),
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
