"""``python -m rcdoc``: the same as the ``rcdoc`` command."""

from rcdoc.commands.cli import entry

# Guarded: worker processes started with "spawn" import the main module again.
if __name__ == "__main__":
    entry()
