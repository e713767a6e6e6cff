import sys

from growthcore.cli import main

if __name__ == "__main__":  # worker processes of the server import this module again
    sys.exit(main())
