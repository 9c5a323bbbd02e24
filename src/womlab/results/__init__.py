"""The results layer: what studies return, written to files and drawn.

Knows the studies and everything below them, and runs nothing: it turns a batch, a
comparison, a seeding or programme study, or a sweep's folder into CSV tables, figures
(matplotlib ``Figure`` objects, never pyplot state), manifests and the report page.
``figures`` draws, ``save`` writes each study's results folder, ``report`` summarises a
sweep's folder into ``report.html``.

Importing this package registers, with :mod:`womlab.studies.presenting`, how a study's
result draws and saves itself (``Comparison.figure()``, ``Comparison.save()``, the report
a sweep writes at its end), so those methods work without the studies importing this
layer.
"""

from __future__ import annotations

from womlab.results.figures import (
    FIGURE_FORMATS,
    adoption_figure,
    comparison_figure,
    network_snapshot_figure,
    plain_text,
    programme_figure,
    referral_tree_figure,
    save_figure,
    seeding_figure,
    strategy_colour,
)
from womlab.results.fit import fit_figure, overlay_observed
from womlab.results.groups import group_figure, product_figure
from womlab.results.levers import lever_figure, save_levers
from womlab.results.report import sensitivity_table, sweep_figures, sweep_summary, write_report
from womlab.results.save import (
    check_output_folder,
    save_batch,
    save_comparison,
    save_fit,
    save_programme,
    save_seeding_study,
    sections_in_use,
)
from womlab.studies.calibration import Fit
from womlab.studies.compare import Comparison
from womlab.studies.levers import LeverStudy
from womlab.studies.presenting import register
from womlab.studies.sweep import SweepSummary

register(Comparison, "figure", comparison_figure)
register(Comparison, "save", save_comparison)
register(SweepSummary, "report", lambda summary: write_report(summary.out, lock=False))  # the sweep holds the lock
register(Fit, "figure", fit_figure)
register(Fit, "save", save_fit)
register(LeverStudy, "figure", lever_figure)
register(LeverStudy, "save", save_levers)

__all__ = [
    "FIGURE_FORMATS",
    "check_output_folder",
    "plain_text",
    "save_figure",
    "sections_in_use",
    "strategy_colour",
    "adoption_figure",
    "comparison_figure",
    "network_snapshot_figure",
    "programme_figure",
    "referral_tree_figure",
    "seeding_figure",
    "save_batch",
    "save_comparison",
    "save_programme",
    "save_seeding_study",
    "sweep_summary",
    "sensitivity_table",
    "sweep_figures",
    "write_report",
    "fit_figure",
    "save_fit",
    "overlay_observed",
    "group_figure",
    "product_figure",
    "lever_figure",
    "save_levers",
]
