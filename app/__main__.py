import sys

from bandsmith.app.entry import main

sys.exit(main())
