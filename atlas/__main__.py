import sys

from atlas.cli import main

sys.exit(main())
