"""``python -m nodeterm`` is the same as the ``nodeterm`` command."""

from nodeterm.cli import entry

entry()
