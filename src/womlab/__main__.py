"""``python -m womlab`` is the ``womlab`` command."""

import sys

from .cli import main

sys.exit(main())
