"""Allow ``python -m bcgen``."""

import sys

from bcgen.cli import main

sys.exit(main())
