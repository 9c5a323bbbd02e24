"""The browser view: the Mesa model of a scenario, step by step, in Mesa's own browser view.

A page (Mesa's ``SolaraViz``, served by solara) with the referral network coloured by
each organisation's state, the adoption curve beside the aggregate model's, and sliders
for word of mouth, external influence, the satisfied share and the network kind; the
play, step and reset buttons are Mesa's. It needs the ``viz`` extra
(``pip install 'womlab[viz]'``).

- :func:`view_page` builds the page for a scenario (show it in a notebook, or make it
  the ``page`` of your own solara app);
- :func:`serve_view` serves it (``womlab view CONFIG``): ``solara run womlab.view.app``
  with the scenario handed over in the environment.

Above the results layer, below the command line; the only part of womlab besides
:mod:`womlab.dynamics.mesa_model` that imports Mesa (its browser view), and only in
:mod:`womlab.view.page`, which loads on first use.
"""

from __future__ import annotations

from typing import Any

from womlab.view.serve import CONFIG_VARIABLE, MAX_VARIABLE, serve_view, view_scenario

__all__ = ["view_page", "serve_view", "view_scenario", "CONFIG_VARIABLE", "MAX_VARIABLE"]


def __getattr__(name: str) -> Any:  # PEP 562: solara and Mesa's view load only when the page is asked for
    if name == "view_page":
        from womlab.view.page import view_page

        return view_page
    raise AttributeError(f"module 'womlab.view' has no attribute {name!r}")
