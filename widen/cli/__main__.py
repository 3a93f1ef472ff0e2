"""`python -m widen.cli ...`: the same as the `widen` command."""

import sys

from widen.cli import main

sys.exit(main())
