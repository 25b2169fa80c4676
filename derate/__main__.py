"""Allow ``python -m derate``."""

import sys

from .cli import main

sys.exit(main())
