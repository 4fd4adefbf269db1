import sys

from arena_studio.cli import main

sys.exit(main())
