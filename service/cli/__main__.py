"""`python -m service.cli`: the `plugfit` command without its installed script."""
import sys

from service.cli import main

if __name__ == "__main__":  # imported (not run) by tools that walk the package
    sys.exit(main())
