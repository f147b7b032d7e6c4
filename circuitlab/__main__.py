"""`python -m circuitlab` is the same as the `circuitlab` command."""

import sys

from circuitlab.cli import main

sys.exit(main())
