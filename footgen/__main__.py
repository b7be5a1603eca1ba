"""``python -m footgen``: the same command line as ``footgen``."""

from footgen.cli import main

main()
