import sys
from pathlib import Path

# Let tests import the shared reference helpers (tests/spice.py) as top-level modules.
sys.path.insert(0, str(Path(__file__).parent))
