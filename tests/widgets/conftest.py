import sys
from pathlib import Path

import pytest

pytest.importorskip("ipywidgets")
sys.path.insert(0, str(Path(__file__).parents[1] / "drafts"))
