"""The demo scenarios that ship inside the package, so that a plain ``pip install`` can run one.

Each is an invented scenario, and says so in its first lines. :func:`load_scenario`
takes a demo's name wherever it takes a file (``womlab run demo``); ``womlab init NAME``
writes one out to edit (:func:`write_demo`).
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path

from womlab.errors import ScenarioError

__all__ = ["demo_names", "demo_path", "write_demo"]


def _folder() -> Path:
    return Path(str(resources.files("womlab.scenario").joinpath("demos")))


def demo_names() -> list[str]:
    """Names of the shipped demo scenarios (``demo``, ``referral-demo``, ...).

    Examples
    --------
    >>> names = demo_names()
    >>> names[0], names == sorted(names), "seeding-demo" in names
    ('demo', True, True)
    """
    return sorted(p.stem for p in _folder().glob("*.toml"))


def demo_path(name: str) -> Path:
    """The file of the shipped demo scenario ``name`` (with or without ``.toml``).

    Raises
    ------
    ScenarioError
        If there is no such demo; the message lists the demos.
    """
    stem = name[:-5] if name.endswith(".toml") else name
    if stem not in demo_names():
        raise ScenarioError(f"no shipped demo scenario {name!r}; the demos are {', '.join(demo_names())}")
    return _folder() / f"{stem}.toml"


def write_demo(name: str, folder: str | Path = ".", *, overwrite: bool = False) -> Path:
    """Write the shipped demo scenario ``name`` into ``folder`` as ``<name>.toml``; returns its path.

    Files the demo reads (its data files, named ``<name>-*.csv`` beside it, such as the fit
    demo's observed record) are written beside it.

    Raises
    ------
    ScenarioError
        If there is no such demo, or the file exists and ``overwrite`` is false (nothing is
        written then).

    Examples
    --------
    >>> import tempfile
    >>> from womlab.scenario import load_scenario
    >>> path = write_demo("demo", tempfile.mkdtemp())
    >>> path.name, load_scenario(path).market.organisations
    ('demo.toml', 12000)
    """
    source = demo_path(name)
    files = [source, *sorted(source.parent.glob(f"{source.stem}-*.csv"))]
    targets = [Path(folder) / f.name for f in files]
    for target in targets:
        if target.exists() and not overwrite:
            raise ScenarioError(f"{str(target)!r} exists; remove it or choose another folder (nothing was written)")
    targets[0].parent.mkdir(parents=True, exist_ok=True)
    for file, target in zip(files, targets):
        target.write_bytes(file.read_bytes())
    return targets[0]
