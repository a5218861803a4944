"""``python -m solsphere``: the same as the ``solsphere`` command."""

import sys

from solsphere.cli import main

if __name__ == "__main__":
    sys.exit(main())
