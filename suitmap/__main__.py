import sys

from suitmap.cli import main

sys.exit(main())
