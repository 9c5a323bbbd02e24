"""``python -m womlab`` is the ``womlab`` command."""

import sys

from womlab.cli import main

sys.exit(main())
