"""python -m derive: the eigensheet command."""

import sys

from .cli import main

sys.exit(main())
