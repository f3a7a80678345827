"""Whole analyses from a project file: ``slipsense run FILE``.

An analysis file (TOML) names the inputs, the steps (ordinary ``slipsense`` subcommands with their
options as keys) and the outputs; :func:`load_analysis` checks all of it before any work starts
and :func:`run_plan` runs it into one results GeoPackage (layers, provenance, default QGIS styles
and a ``slipsense_run`` record) and one self-contained HTML report.  See the README section
"Analysis files" for the keys, and :mod:`.runner` for how later steps read earlier ones.

The caller passes the subcommands (:class:`Command`: an argparse parser and a run function), so
the library never imports the CLI and every command is available as a step.
"""
from .runner import GATE_EXIT_CODE, RunResult, StepError, StepOutcome, quality_counts, run_plan, versions
from .spec import QUALITY_ORDER, AnalysisError, Command, Plan, StepPlan, load_analysis, plan_analysis

__all__ = [
    "AnalysisError",
    "Command",
    "Plan",
    "StepPlan",
    "QUALITY_ORDER",
    "load_analysis",
    "plan_analysis",
    "run_plan",
    "RunResult",
    "StepError",
    "StepOutcome",
    "GATE_EXIT_CODE",
    "quality_counts",
    "versions",
]
