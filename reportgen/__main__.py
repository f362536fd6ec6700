import sys

from reportgen.cli import main

sys.exit(main())
