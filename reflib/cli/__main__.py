"""``python -m reflib.cli``: the same as the ``reflib`` console script."""

from reflib.cli import main

main()
