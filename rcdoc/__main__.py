"""``python -m rcdoc``: the same as the ``rcdoc`` command."""

from .cli import entry

entry()
