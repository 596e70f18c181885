"""``python -m ttvkit.cli``."""

import sys

from ttvkit.cli.main import main

sys.exit(main())
