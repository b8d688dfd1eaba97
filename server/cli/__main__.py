"""``python -m server.cli``: the same as the ``liftmatch`` console script."""

import sys

from server.cli import main

sys.exit(main())
