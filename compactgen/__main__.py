"""`python -m compactgen ...` is the same as the `compactgen` command."""
import sys

from compactgen.cli import main

if __name__ == "__main__":  # forkserver/spawn workers import __main__ again: no second run there
    sys.exit(main())
