import sys

from uq.cli.main import main

sys.exit(main())
