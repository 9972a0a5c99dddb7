"""`warcio check` on a WARC file, the independent checker every test of written WARC files uses."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

__all__ = ["warcio_check"]


def warcio_check(path: Path) -> subprocess.CompletedProcess[str]:
    """Run warcio's checker (every block and payload digest, WARC 1.1 §5.8/§5.9) on ``path``."""
    return subprocess.run(
        [str(Path(sys.executable).with_name("warcio")), "check", "-v", str(path)],
        capture_output=True, text=True, check=False,
    )  # fmt: skip
