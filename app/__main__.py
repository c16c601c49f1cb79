import sys

from .main import run_app

sys.exit(run_app(sys.argv[1:]))
