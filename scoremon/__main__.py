"""``python -m scoremon``: the command line, for a checkout that is not the installed one."""
import sys

from .cli import main

sys.exit(main())
