"""What every benchmark table states about the machine it ran on."""

from __future__ import annotations

import platform


def cpu_model() -> str:
    """The processor's model name from /proc/cpuinfo (or what platform knows)."""
    try:
        with open("/proc/cpuinfo") as fh:
            for line in fh:
                if line.lower().startswith("model name"):
                    return line.split(":", 1)[1].strip()
    except OSError:
        pass
    return platform.processor() or platform.machine()
