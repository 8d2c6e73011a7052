"""``python -m riskreport``."""

import sys

from riskreport.cli import main

sys.exit(main())
