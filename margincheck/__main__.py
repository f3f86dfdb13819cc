"""``python -m margincheck``: the same as the ``margincheck`` command."""

import sys

from margincheck.cli import main

sys.exit(main())
