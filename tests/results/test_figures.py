"""Figures a reader can trust: no clipped text, legends off the data, names as text, one colour per strategy.

matplotlib reads text between two unescaped ``$`` as mathtext (matplotlib documentation,
"Writing mathematical expressions"); a scenario named ``$\\notacommand$`` crashed drawing
and "costs $5 and $10" was drawn as math. That a legend must not cover data and that text
must stay inside the canvas is common practice for published figures.
"""

from __future__ import annotations

import io

import numpy as np
import pytest
from matplotlib.backends.backend_agg import FigureCanvasAgg

from womlab import Scenario, compare, compare_strategies, evaluate_programme, run_replicates
from womlab.results import (
    adoption_figure,
    comparison_figure,
    programme_figure,
    referral_tree_figure,
    save_figure,
    seeding_figure,
    strategy_colour,
)

LONG = (
    "an invented scenario with a very long name: fleet-maintenance software sold to regional logistics firms "
    "in six regions of an invented country, 2026 launch"
)


def _scenario(name: str) -> Scenario:
    return Scenario.from_dict(
        {
            "name": name,
            "seed": 9,
            "market": {"organisations": 200, "initial_customers": 2},
            "network": {"kind": "random", "mean_degree": 6},
            "run": {"periods": 12},
            "referral": {"enrol": "all", "talk_multiplier": 2.0, "reward": 1.0},
        }
    )


@pytest.fixture(scope="module")
def studies():  # noqa: ANN201
    out = {}
    for name in ("$\\notacommand$", "costs $5 and $10", LONG):
        s = _scenario(name)
        out[name] = {
            "adoption": adoption_figure(run_replicates(s.replace("referral.enrol", "none"), 3)),
            "comparison": comparison_figure(
                compare(s.replace("referral.enrol", "none"), 3, bootstrap=20, fit_bootstrap=5)
            ),
            "seeding": seeding_figure(
                compare_strategies(s.replace("referral.enrol", "none"), ["hubs", "fringe"], replicates=3)
            ),
        }
        study = evaluate_programme(s, 3)
        out[name]["programme"] = programme_figure(study)
        out[name]["referral_tree"] = referral_tree_figure(study)
    return out


def _drawn(fig):  # noqa: ANN001, ANN202
    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    return canvas.get_renderer()


@pytest.mark.parametrize("name", ["$\\notacommand$", "costs $5 and $10", LONG])
def test_every_figure_draws_the_name_as_text(studies, name):
    for kind, fig in studies[name].items():
        _drawn(fig)
        titles = [ax.title for ax in fig.axes] + ([fig._suptitle] if fig._suptitle is not None else [])
        shown = [t for t in titles if t.get_text()]
        assert shown, kind
        for t in shown:
            text, is_math = t._preprocess_math(t.get_text())
            assert not is_math, (kind, t.get_text())
        if name != LONG:
            assert any(name in t._preprocess_math(t.get_text())[0] for t in shown), kind


@pytest.mark.parametrize("kind", ["adoption", "comparison", "seeding", "programme", "referral_tree"])
def test_no_text_is_clipped_and_legends_are_off_the_data(studies, kind):
    fig = studies[LONG][kind]
    renderer = _drawn(fig)
    frame = fig.bbox
    texts = []
    for ax in fig.axes:
        (x0, x1), (y0, y1) = sorted(ax.get_xlim()), sorted(ax.get_ylim())
        texts += [ax.title, ax.xaxis.label, ax.yaxis.label]
        texts += [t for t in ax.get_xticklabels() if x0 <= t.get_position()[0] <= x1]  # ticks in view are drawn
        texts += [t for t in ax.get_yticklabels() if y0 <= t.get_position()[1] <= y1]
    texts += [fig._suptitle] if fig._suptitle is not None else []
    for t in texts:
        if not t.get_text() or not t.get_visible():
            continue
        box = t.get_window_extent(renderer)
        assert (
            box.x0 >= frame.x0 - 1 and box.x1 <= frame.x1 + 1 and box.y0 >= frame.y0 - 1 and box.y1 <= frame.y1 + 1
        ), (kind, t.get_text())
    legends = [ax.get_legend() for ax in fig.axes if ax.get_legend() is not None] + list(fig.legends)
    assert legends, kind
    for legend in legends:
        box = legend.get_window_extent(renderer)
        assert frame.x0 - 1 <= box.x0 and box.x1 <= frame.x1 + 1, kind
        for ax in fig.axes:
            data = ax.get_window_extent(renderer)
            overlap = (
                min(box.x1, data.x1) - max(box.x0, data.x0) > 1 and min(box.y1, data.y1) - max(box.y0, data.y0) > 1
            )
            assert not overlap, (kind, "legend over the data")


def test_a_long_title_wraps(studies):
    assert "\n" in studies[LONG]["adoption"].axes[0].get_title()


def test_a_strategy_has_one_colour_in_every_figure():
    s = _scenario("invented").replace("referral.enrol", "none")
    a = seeding_figure(compare_strategies(s, ["hubs", "fringe"], replicates=3))
    b = seeding_figure(compare_strategies(s, ["spread", "fringe", "hubs"], replicates=3))
    for fig in (a, b):
        lines = {line.get_label(): line.get_color() for line in fig.axes[0].get_lines()}
        for name in ("random", "hubs", "fringe"):
            assert lines[name] == strategy_colour(name)
    assert (
        len(
            {
                strategy_colour(n)
                for n in (
                    "random",
                    "hubs",
                    "bridges",
                    "pagerank",
                    "coreness",
                    "fringe",
                    "by_region",
                    "spread",
                    "greedy",
                )
            }
        )
        == 9
    )


def test_aggregate_curves_that_coincide_are_drawn_once(studies):
    # under the share rule there is no ceiling, so the capped Bass difference model is the Bass
    # difference model (Bass 1969 difference equation, in customer counts)
    # (on a random network the share rule's degree mean field is the Bass difference model too:
    # Q = q·s whatever the degrees, womlab.aggregate.mapped_parameters)
    from womlab.aggregate import AGGREGATE_LABELS

    fig = studies["costs $5 and $10"]["comparison"]
    labels = [
        line.get_label().replace("\n", " ") for line in fig.axes[0].get_lines() if not line.get_label().startswith("_")
    ]
    coincide = [label for label in labels if "coincide" in label]
    assert len(coincide) == 1 and "rate ceiling" in coincide[0] and "Bass difference model, mapped" in coincide[0]
    assert len(labels) == len(set(labels))
    for name in ("bass_mapped", "bass_difference", "capped_bass_difference", "degree_mean_field", "bass_fitted"):
        assert sum(AGGREGATE_LABELS[name] in label for label in labels) == 1, name


def test_the_run_and_compare_figures_show_the_mean(studies):
    for kind in ("adoption", "comparison"):
        labels = [line.get_label() for line in studies[LONG][kind].axes[0].get_lines()]
        assert any(label.startswith("network, mean of 3 runs") for label in labels), kind


@pytest.fixture(scope="module")
def batch():  # noqa: ANN201
    return run_replicates(_scenario("costs $5 and $10").replace("referral.enrol", "none"), 2)


@pytest.mark.parametrize("fmt, magic", [("png", b"\x89PNG"), ("pdf", b"%PDF"), ("svg", b"<?xml")])
def test_figures_save_in_each_format_as_the_same_bytes(batch, fmt, magic):
    # no timestamp inside: the same figure drawn twice is the same file (what the determinism test relies on)
    first, second = io.BytesIO(), io.BytesIO()
    save_figure(adoption_figure(batch), first, fmt)
    save_figure(adoption_figure(batch), second, fmt)
    assert first.getvalue().startswith(magic) and first.getvalue() == second.getvalue()


def test_a_figure_takes_its_size():
    s = _scenario("invented").replace("referral.enrol", "none")
    fig = adoption_figure(run_replicates(s, 2), size=(5.0, 4.0))
    assert np.allclose(fig.get_size_inches(), [5.0, 4.0])
