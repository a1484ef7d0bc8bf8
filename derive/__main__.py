"""python -m derive"""

import sys

from .cli import main

sys.exit(main())
