"""``python -m evcal.cli ...``: the same as the ``evcal`` console command."""

from evcal.cli import main

main()
