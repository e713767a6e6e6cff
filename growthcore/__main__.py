import sys

from growthcore.cli import main

sys.exit(main())
