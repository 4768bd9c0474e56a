"""What the benchmark scripts say about the machine they ran on."""

from __future__ import annotations

import os
import platform
from pathlib import Path


def cpu_model() -> str:
    """The CPU's model name from /proc/cpuinfo (or what platform knows)."""
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                return line.split(":", 1)[1].strip()
    except OSError:
        pass
    return platform.processor() or "unknown CPU"


def describe() -> str:
    """One line: OS, CPU, core count, Python, numpy and scipy versions."""
    import numpy
    import scipy

    return (f"{platform.system()} {platform.release()}, {cpu_model()}, {os.cpu_count()} "
            f"logical CPUs, Python {platform.python_version()}, numpy {numpy.__version__}, "
            f"scipy {scipy.__version__}")
