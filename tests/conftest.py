import os
import signal
import sys
from pathlib import Path

import matplotlib

matplotlib.use("Agg")

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))
os.environ.setdefault("MPLBACKEND", "Agg")

# A test run started in the background by a non-interactive shell (`cmd &`) inherits SIGINT ignored,
# and so would every process the tests start: Python keeps an ignored SIGINT ignored, and a stop
# test's Ctrl-C would then reach nothing. Ctrl-C at a terminal reaches a foreground run, whose
# SIGINT is not ignored; so the tests run as from a terminal (a handler here is reset to the
# default in every program they start).
if signal.getsignal(signal.SIGINT) == signal.SIG_IGN:
    signal.signal(signal.SIGINT, signal.default_int_handler)
