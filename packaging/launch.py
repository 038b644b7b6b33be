"""Entry script for the PyInstaller build."""
import sys

from contactplan.cli import main

if __name__ == "__main__":
    sys.exit(main())
