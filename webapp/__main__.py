"""``python -m webapp`` runs the ``rondo`` command."""

import sys

from .cli import main

sys.exit(main())
