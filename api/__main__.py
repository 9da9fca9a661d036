"""``python -m starkiln``: the same as the ``starkiln`` command."""

import sys

from starkiln.cli.main import main

sys.exit(main())
