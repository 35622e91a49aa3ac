"""`python -m drc.cli`: the command line."""

import sys

from drc.cli.parser import main

sys.exit(main())
