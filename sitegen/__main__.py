"""``python -m sitegen``: the same as the ``sitegen`` command."""

import sys

from sitegen.cli import main

sys.exit(main())
