"""``python -m labcheck.cli``: the same as the ``labcheck`` command."""

import sys

from labcheck.cli.main import main

sys.exit(main())
