"""A 50 MB GPX track reads in bounded memory (issue 8: 509,000 points took 1.06 GB).

Memory is measured in a fresh process (its peak resident size while reading, less its
resident size after importing tripsim), not time: ``tripsim bench`` prints the time.
"""

from __future__ import annotations

import json
import subprocess
import sys

from tripsim.bench import write_track_gpx

_CHILD = """
import json, sys
from tripsim.io.gpx import read_gpx

def status_mb(key):  # VmHWM: peak resident size of this process image (not the parent's)
    with open("/proc/self/status") as fh:
        line = next(ln for ln in fh if ln.startswith(key + ":"))
    return int(line.split()[1]) / 1024

rss_before = status_mb("VmRSS")
route = read_gpx(sys.argv[1])
peak = status_mb("VmHWM")
print(json.dumps({"points": route.n_points, "grew_mb": peak - rss_before, "peak_mb": peak}))
"""


def test_fifty_megabyte_track_reads_in_bounded_memory(tmp_path):
    path = tmp_path / "track.gpx"
    size = write_track_gpx(path, 509_000)
    assert size > 50e6
    out = subprocess.run([sys.executable, "-c", _CHILD, str(path)], capture_output=True,
                         text=True, check=True, timeout=300)
    figures = json.loads(out.stdout)
    assert figures["points"] == 509_000
    # the text twice at most (bytes while decoding, then str) and the arrays: ~110 MB
    assert figures["grew_mb"] < 250, figures
    assert figures["peak_mb"] < 500, figures  # the whole process, imports included
