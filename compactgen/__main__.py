"""`python -m compactgen ...` is the same as the `compactgen` command."""
import sys

from compactgen.cli import main

sys.exit(main())
