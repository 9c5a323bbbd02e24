"""Serving the browser view: which scenario it shows, and the solara server that shows it."""

from __future__ import annotations

import importlib.util
import os
import subprocess
import sys
from pathlib import Path

from womlab.errors import ViewError
from womlab.scenario import Scenario, load_scenario

__all__ = ["serve_view", "view_scenario", "CONFIG_VARIABLE", "MAX_VARIABLE", "DEFAULT_MAX_ORGANISATIONS"]

#: Environment variables through which :func:`serve_view` hands the scenario to the app.
CONFIG_VARIABLE = "WOMLAB_VIEW_CONFIG"
MAX_VARIABLE = "WOMLAB_VIEW_MAX_ORGANISATIONS"

#: Where solara looks for a script solara-assets lacks: nowhere beyond this machine.
OFFLINE_CDN = "http://127.0.0.1:9/"

#: The view draws every organisation and tie each step; larger markets are scaled down to this.
DEFAULT_MAX_ORGANISATIONS = 400


def view_scenario(scenario: Scenario, max_organisations: int = DEFAULT_MAX_ORGANISATIONS) -> Scenario:
    """The scenario as the view runs it: at most ``max_organisations`` organisations.

    A larger market is scaled down (``initial_customers`` in proportion, at least one;
    ``initial_share``, regions and every rate unchanged), so that a step redraws in a
    fraction of a second; an edge-list network is shown as it is.

    Raises
    ------
    ViewError
        If ``max_organisations`` is below 10.

    Examples
    --------
    >>> s = view_scenario(load_scenario("demo"))
    >>> s.market.organisations, s.n_initial
    (400, 4)
    """
    if max_organisations < 10:
        raise ViewError(f"max_organisations must be at least 10, got {max_organisations}")
    market = scenario.market
    if market.organisations <= max_organisations or scenario.network.kind == "edgelist":
        return scenario
    changes: dict[str, object] = {"market.organisations": max_organisations}
    if market.initial_customers is not None:
        changes["market.initial_customers"] = max(
            1, round(market.initial_customers * max_organisations / market.organisations)
        )
    return scenario.replace(changes)


def serve_view(
    config: str | Path,
    *,
    port: int = 8765,
    host: str = "127.0.0.1",
    max_organisations: int = DEFAULT_MAX_ORGANISATIONS,
    open_browser: bool = False,
) -> int:
    """Serve the browser view of a scenario until interrupted; returns the server's exit status.

    Runs ``solara run womlab.view.app`` in production mode on ``host:port`` with the
    scenario file (or shipped demo name) handed over in :data:`CONFIG_VARIABLE`. The file
    is validated first, so a mistake is reported before any server starts. solara's usage
    reporting is switched off, and with ``solara-assets`` installed (the ``viz`` extra)
    the page's scripts come from the package, so the page needs no connection beyond this
    machine.

    Parameters
    ----------
    config : str or Path
        Scenario file, or a shipped demo's name (``"demo"``).
    port, host : int, str
        Where the page is served (``http://host:port``); the default host takes no
        connections from other machines.
    max_organisations : int
        Larger markets are scaled down to this many organisations (:func:`view_scenario`).
    open_browser : bool
        Open the page in the default web browser.

    Raises
    ------
    ScenarioError
        If the scenario cannot be read or is invalid.
    ViewError
        If the ``viz`` extra is not installed.
    """
    view_scenario(load_scenario(config), max_organisations)  # every mistake now, in one line
    missing = [name for name in ("solara", "altair") if importlib.util.find_spec(name) is None]
    if missing:
        raise ViewError(
            f"the browser view needs the viz extra (missing {', '.join(missing)}): pip install 'womlab[viz]'"
        )
    path = Path(config)
    env = {
        **os.environ,
        CONFIG_VARIABLE: str(path.resolve()) if path.is_file() else str(config),
        MAX_VARIABLE: str(max_organisations),
    }
    env.setdefault("SOLARA_TELEMETRY_MIXPANEL_ENABLE", "false")  # solara reports usage unless told not to
    if importlib.util.find_spec("solara_assets") is not None:
        # the page's scripts come from solara-assets through solara's own proxy; a file it lacked
        # would be fetched from this machine's discard port, never from a CDN elsewhere
        env.setdefault("SOLARA_ASSETS_CDN", OFFLINE_CDN)
    command = [
        sys.executable,
        "-m",
        "solara",
        "run",
        "womlab.view.app",
        "--production",
        "--no-check-version",
        "--host",
        host,
        "--port",
        str(port),
        "--open" if open_browser else "--no-open",
    ]
    try:
        return subprocess.run(command, env=env, check=False).returncode
    except KeyboardInterrupt:
        return 0
