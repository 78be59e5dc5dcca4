"""``python -m planner``: the same command line as the ``planner`` script."""

import sys

from .cli import main

sys.exit(main())
