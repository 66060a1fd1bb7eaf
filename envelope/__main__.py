"""``python -m envelope``: the same command line as the ``envelope`` script."""

from envelope.cli import app

if __name__ == "__main__":
    app(prog_name="envelope")
