"""The solara app of the browser view: ``solara run womlab.view.app``.

Shows the scenario named in the environment variable ``WOMLAB_VIEW_CONFIG`` (a scenario
file or a shipped demo's name; the invented ``demo`` when unset), scaled down to
``WOMLAB_VIEW_MAX_ORGANISATIONS`` organisations. ``womlab view CONFIG``
(:func:`womlab.view.serve_view`) sets both and starts the server.
"""

from __future__ import annotations

import os

from womlab.scenario import load_scenario
from womlab.view.page import view_page
from womlab.view.serve import CONFIG_VARIABLE, DEFAULT_MAX_ORGANISATIONS, MAX_VARIABLE

page = view_page(
    load_scenario(os.environ.get(CONFIG_VARIABLE, "demo")),
    max_organisations=int(os.environ.get(MAX_VARIABLE, DEFAULT_MAX_ORGANISATIONS)),
)
