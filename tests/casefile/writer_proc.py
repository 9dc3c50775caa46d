"""Child process for the concurrency and kill tests: appends events, reports each commit.

Usage: python writer_proc.py STORE ITEM TAG COUNT [SEED]
Prints "ready" once the store is open, then "ok TAG-i" after each committed write.
With SEED, every third write is a measurement (a stored file plus its row and event).
"""

from __future__ import annotations

import random
import sys

from workbench.casefile import CaseStore


def main() -> None:
    root, item, tag, count = sys.argv[1], sys.argv[2], sys.argv[3], int(sys.argv[4])
    rng = random.Random(int(sys.argv[5])) if len(sys.argv) > 5 else None
    with CaseStore.open(root) as s:
        print("ready", flush=True)
        for i in range(count):
            note = f"{tag}-{i}"
            if rng is not None and i % 3 == 2:
                s.add_measurement(
                    item,
                    rng.randbytes(2048) + note.encode(),
                    f"{note}.bin",
                    "other",
                    "bench",
                    {"i": i},
                    "Ann",
                    "2025-01-01T00:00:00Z",
                )
                print(f"ok {note} m", flush=True)
            else:
                s.add_custody_event(item, "note", "Ann", note=note)
                print(f"ok {note}", flush=True)


if __name__ == "__main__":
    main()
