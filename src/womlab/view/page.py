"""The page of the browser view: Mesa's ``SolaraViz`` over :class:`~womlab.dynamics.mesa_model.ReferralModel`.

Two panels of our own beside Mesa's controls — the network, each organisation coloured by
its state, and the customer share so far against the aggregate model's curve for the whole
horizon — and four inputs that rebuild the model on Mesa's reset: word of mouth, external
influence, the satisfied share and the network kind. Every other field of the scenario is
passed to the model unchanged, as flat keyword parameters
(:func:`~womlab.dynamics.mesa_model.flat_parameters`), exactly as Mesa's batch runner would.
"""

from __future__ import annotations

from typing import Any

import matplotlib

matplotlib.use("Agg")  # the page renders figures to images; no window system

import matplotlib.pyplot as plt  # noqa: E402
import networkx as nx  # noqa: E402
import numpy as np  # noqa: E402
import solara  # noqa: E402
from matplotlib.collections import LineCollection  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402
from matplotlib.lines import Line2D  # noqa: E402
from mesa.visualization import Slider, SolaraViz  # noqa: E402

from womlab.aggregate import aggregate_curve  # noqa: E402
from womlab.dynamics.mesa_model import ReferralModel, flat_parameters  # noqa: E402
from womlab.networks.given import mapped_with  # noqa: E402
from womlab.scenario import NETWORK_KINDS, Scenario  # noqa: E402
from womlab.view.serve import DEFAULT_MAX_ORGANISATIONS, view_scenario  # noqa: E402

__all__ = ["view_page", "network_figure", "curve_figure", "STATE_COLOURS", "INPUTS"]

#: Colour of each state on the network panel.
STATE_COLOURS = {
    "potential customer": "#c9ccd1",
    "customer, not satisfied": "#e8912d",
    "satisfied customer": "#1f5fa8",
}

#: The inputs the page offers: flat model parameter → what it sets.
INPUTS = {
    "adoption_word_of_mouth": "adoption.word_of_mouth",
    "adoption_external": "adoption.external",
    "adoption_satisfied_share": "adoption.satisfied_share",
    "network_kind": "network.kind",
}


def _positions(model: ReferralModel) -> np.ndarray:
    """Node positions for the model's network, computed once per model (a spring layout)."""
    cached = getattr(model, "_view_positions", None)
    if cached is not None:
        return cached
    network = model.network
    if network.complete or network.ties == 0:
        angle = 2 * np.pi * np.arange(network.n) / max(network.n, 1)
        xy = np.column_stack([np.cos(angle), np.sin(angle)])
    else:
        graph = nx.empty_graph(network.n)
        rows = np.repeat(np.arange(network.n), np.diff(network.indptr))
        upper = rows < network.indices
        graph.add_edges_from(zip(rows[upper].tolist(), network.indices[upper].tolist()))
        layout = nx.spring_layout(graph, seed=model.womlab_scenario.seed % (2**32), iterations=60)
        xy = np.array([layout[i] for i in range(network.n)])
    model._view_positions = xy
    return xy


def network_figure(model: ReferralModel) -> Figure:
    """The network now: every organisation coloured by its state, initial customers ringed.

    Examples
    --------
    >>> model = ReferralModel(organisations=60, initial_customers=3, kind="small_world", mean_degree=4)
    >>> len(network_figure(model).axes)
    1
    """
    network = model.network
    xy = _positions(model)
    agents = [model.organisation(i) for i in range(network.n)]
    customer = np.array([a.customer for a in agents])
    satisfied = np.array([a.customer and a.satisfied for a in agents])
    colours = np.where(
        satisfied,
        STATE_COLOURS["satisfied customer"],
        np.where(customer, STATE_COLOURS["customer, not satisfied"], STATE_COLOURS["potential customer"]),
    )
    fig = Figure(figsize=(5.6, 5.2), dpi=100)
    ax = fig.add_subplot()
    if not network.complete and network.ties:
        rows = np.repeat(np.arange(network.n), np.diff(network.indptr))
        upper = rows < network.indices
        segments = np.stack([xy[rows[upper]], xy[network.indices[upper]]], axis=1)
        ax.add_collection(LineCollection(list(segments), colors="#9aa0a6", linewidths=0.4, alpha=0.5, zorder=1))
    size = float(np.clip(9000 / max(network.n, 1), 12, 80))
    ax.scatter(xy[:, 0], xy[:, 1], s=size, c=colours, edgecolors="none", zorder=2)
    first = model.initial
    ax.scatter(
        xy[first, 0], xy[first, 1], s=size * 2.2, facecolors="none", edgecolors="black", linewidths=1.0, zorder=3
    )
    handles = [Line2D([], [], marker="o", linestyle="", color=c, label=label) for label, c in STATE_COLOURS.items()]
    handles.append(
        Line2D([], [], marker="o", linestyle="", markerfacecolor="none", color="black", label="initial customer")
    )
    ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, -0.01), ncol=2, frameon=False, fontsize=8)
    kind = "complete (every organisation knows every other; ties not drawn)" if network.complete else network.kind
    ax.set_title(f"{network.n} organisations, {kind} network — period {model.period}", fontsize=9)
    ax.set_aspect("equal")
    ax.autoscale_view()
    ax.axis("off")
    fig.tight_layout()
    return fig


def curve_figure(model: ReferralModel) -> Figure:
    """Customer share per step so far, against the aggregate model's curve for the whole horizon.

    Examples
    --------
    >>> model = ReferralModel(organisations=60, initial_customers=3, kind="random", mean_degree=4, periods=5)
    >>> model.step()
    >>> [line.get_label() for line in curve_figure(model).axes[0].get_lines()]
    ['network (this run)', 'aggregate model (Bass, same step)']
    """
    scenario = model.womlab_scenario
    table = model.datacollector.get_model_vars_dataframe()
    n = model.network.n
    aggregate = aggregate_curve(mapped_with(scenario, model.network))
    periods = scenario.run.periods
    fig = Figure(figsize=(5.6, 4.0), dpi=100)
    ax = fig.add_subplot()
    ax.plot(
        table["time"],
        table["customers"] / n,
        color=STATE_COLOURS["satisfied customer"],
        lw=2.2,
        label="network (this run)",
    )
    if np.isfinite(aggregate).any():
        label = (
            "aggregate model (stock and flow)"
            if scenario.adoption.rule == "capped"
            else "aggregate model (Bass, same step)"
        )
        ax.plot(np.arange(periods + 1), aggregate, color="#555555", lw=1.4, ls="--", label=label)
    else:
        ax.text(
            0.5,
            0.92,
            f"the {scenario.adoption.rule} rule has no aggregate counterpart",
            transform=ax.transAxes,
            ha="center",
            fontsize=8,
            color="#555555",
        )
    ax.set_xlim(0, periods)
    ax.set_ylim(0, 1)
    ax.set_xlabel("period")
    ax.set_ylabel("customers, share of the market")
    ax.grid(alpha=0.3)
    ax.legend(loc="upper left", fontsize=8, frameon=False)
    fig.tight_layout()
    return fig


def _status(model: ReferralModel) -> str:
    scenario = model.womlab_scenario
    n = model.network.n
    aggregate = aggregate_curve(mapped_with(scenario, model.network))
    line = (
        f"<b>Period {model.period} of {scenario.run.periods}</b> · {model.customers} customers of {n} "
        f"({model.customers / n:.1%}), {model.satisfied_customers} satisfied"
    )
    if np.isfinite(aggregate[model.period]):
        line += f" · aggregate model {aggregate[model.period]:.1%}"
    return line


def _show(fig: Figure) -> None:
    solara.FigureMatplotlib(fig, format="png", bbox_inches="tight")
    plt.close(fig)


def NetworkPanel(model: ReferralModel) -> None:  # noqa: N802 - a solara component
    """The status line and the network, redrawn after every step (Mesa's view calls it with the model)."""
    solara.HTML(tag="p", unsafe_innerHTML=_status(model), style={"font-size": "15px"})  # numbers only
    _show(network_figure(model))


def CurvePanel(model: ReferralModel) -> None:  # noqa: N802 - a solara component
    """The adoption curve beside the aggregate curve."""
    _show(curve_figure(model))


def _inputs(scenario: Scenario) -> dict[str, Any]:
    a = scenario.adoption
    kinds = [k for k in NETWORK_KINDS if k != "edgelist" or scenario.network.kind == "edgelist"]
    return {
        "adoption_word_of_mouth": Slider("Word of mouth (q, per period)", a.word_of_mouth, 0.0, 1.0, 0.01),
        "adoption_external": Slider("External influence (p, per period)", a.external, 0.0, 0.1, 0.001),
        "adoption_satisfied_share": Slider("Satisfied share of customers", a.satisfied_share, 0.0, 1.0, 0.05),
        "network_kind": {"type": "Select", "value": scenario.network.kind, "values": kinds, "label": "Network kind"},
    }


def view_page(scenario: Scenario, *, max_organisations: int = DEFAULT_MAX_ORGANISATIONS) -> Any:
    """Mesa's browser view of the scenario's Mesa model, with womlab's panels and inputs.

    Parameters
    ----------
    scenario : Scenario
        What to show; a market larger than ``max_organisations`` is scaled down
        (:func:`womlab.view.view_scenario`).
    max_organisations : int
        The most organisations drawn.

    Returns
    -------
    solara element
        The page: the ``page`` of a solara app, or shown as the last expression of a
        notebook cell. Changing an input and pressing Mesa's reset builds a new model
        with it; every other field is the scenario's.

    Examples
    --------
    >>> from womlab import load_scenario
    >>> page = view_page(load_scenario("demo"))
    >>> type(page).__name__
    'Element'
    """
    shown = view_scenario(scenario, max_organisations)
    if shown.run.clock == "continuous":  # the Mesa model steps; show it on the discrete clock
        shown = shown.replace("run.clock", "discrete")
    fixed = {k: v for k, v in flat_parameters(shown).items() if k not in INPUTS}
    model = ReferralModel(shown)
    return SolaraViz(
        model,
        components=[NetworkPanel, CurvePanel],
        model_params={**fixed, **_inputs(shown)},
        name=f"womlab · {shown.name}",
    )
