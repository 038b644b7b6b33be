import sys

from contactplan.cli import main

sys.exit(main())
