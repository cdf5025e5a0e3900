import sys

from bandsmith.app.cli import main

sys.exit(main())
