"""``python -m envelope``: the same command line as the ``envelope`` script."""

from envelope.cli import main

if __name__ == "__main__":
    main()
