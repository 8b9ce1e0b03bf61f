"""``python -m nodeterm`` is the same as the ``nodeterm`` command."""

import sys

from .cli import main

sys.exit(main())
