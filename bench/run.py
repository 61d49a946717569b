"""`make bench`: every benchmark, one after the other, and their figures in
bench/results.json with the machine they ran on."""

from __future__ import annotations

import json
import os
import platform
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).parent))
import batch  # noqa: E402
import service  # noqa: E402
import steps  # noqa: E402


def machine() -> dict:
    model = next((line.split(":", 1)[1].strip() for line in Path("/proc/cpuinfo").read_text()
                  .splitlines() if line.startswith("model name")), platform.processor())
    return {"cpu": model, "cores": os.cpu_count(), "python": platform.python_version(),
            "system": platform.platform(), "date": time.strftime("%Y-%m-%d")}


def main() -> None:
    results = {"machine": machine(), "steps": steps.main()}
    print()
    results["service"] = service.main()
    print()
    results["batch"] = batch.main()
    target = Path(__file__).parent / "results.json"
    target.write_text(json.dumps(results, indent=1) + "\n", encoding="utf-8")
    print(f"\nfigures written to {target}")


if __name__ == "__main__":
    main()
