"""``python -m siltandem.cli``: the same command line as the ``siltandem`` script."""
import sys

from siltandem.cli.main import main

sys.exit(main())
