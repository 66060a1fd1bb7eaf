"""``python -m envelope``: the command line of `envelope.cli`."""

from envelope.cli import main

main()
