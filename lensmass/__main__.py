"""``python -m lensmass``: the same command line as ``lensmass``."""

import sys

from lensmass.cli import main

if __name__ == "__main__":
    sys.exit(main())
