"""``python -m budget``: the thetabudget command."""

import sys

from budget.cli import main

sys.exit(main())
