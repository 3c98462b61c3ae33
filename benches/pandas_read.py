"""The pandas peer of the load bench: `read_csv` on the same files, CPU time per file.

Run by `cargo bench --bench load` (python3 with pandas; skipped when missing), or by hand:
    python3 benches/pandas_read.py FILE [FILE ...]
Prints one line per file: name, MB, median CPU seconds of 5 rounds.
"""
import os
import sys
import time

import pandas as pd

for path in sys.argv[1:]:
    mb = os.path.getsize(path) / 1e6
    times = []
    for _ in range(5):
        start = time.process_time()
        frame = pd.read_csv(path)
        times.append(time.process_time() - start)
        assert len(frame) > 0
    times.sort()
    print(f"{os.path.basename(path)} {mb:.3f} {times[len(times) // 2]:.6f}")
