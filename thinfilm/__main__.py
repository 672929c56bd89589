"""python -m thinfilm"""

import sys

from thinfilm.cli import main

sys.exit(main())
