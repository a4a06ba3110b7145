"""``python -m icecolumn``: the command-line interface."""
import sys

from icecolumn.cli import main

sys.exit(main())
