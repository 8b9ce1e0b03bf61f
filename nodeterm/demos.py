"""The bundled demo circuits (installed as the package ``nodeterm.circuits``)."""

from __future__ import annotations

from importlib import resources

DEFAULT_DEMO = "kiln_preamp.toml"


def demo_path(name: str = DEFAULT_DEMO) -> str:
    """Path of a bundled demo circuit (works after a non-editable install)."""
    return str(resources.files("nodeterm.circuits").joinpath(name))
