"""Bundled demo circuits (TOML files), installed as the package ``nodeterm.circuits``."""
