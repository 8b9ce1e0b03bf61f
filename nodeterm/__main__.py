"""``python -m nodeterm`` is the same as the ``nodeterm`` command."""

import sys

from nodeterm.cli import main

sys.exit(main())
