"""python -m sheetbuilder: the command line."""
import sys

try:
    from sheetbuilder.cli import main
except KeyboardInterrupt:  # Ctrl-C while the libraries load: nothing has started yet
    sys.exit(130)

sys.exit(main())
