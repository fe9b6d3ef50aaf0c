"""``python -m fescan.cli``."""

import sys

from fescan.cli.main import main

if __name__ == "__main__":
    sys.exit(main())
