"""``python -m gapfinder``: the same as the ``gapfinder`` command."""

from gapfinder.cli import main

main()
