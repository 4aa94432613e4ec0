"""``python -m reflib``: the same as the ``reflib`` console script."""

from reflib.cli import main

main()
