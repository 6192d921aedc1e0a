"""Time the bundled program's self-check in an empty environment with a fresh home folder.

Prints when the window was shown (as the program measured it from its start) and how long the
whole run took from outside; exits 1 when the self-check fails.

    python installer/time-start.py dist/loadledger/loadledger
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time


def main(program: str) -> int:
    with tempfile.TemporaryDirectory(prefix="loadledger-home-") as home:
        env = {"HOME": home, "QT_QPA_PLATFORM": "offscreen", "PATH": os.defpath}
        if os.name == "nt":
            env.update(USERPROFILE=home, SYSTEMROOT=os.environ.get("SYSTEMROOT", ""))
        began = time.perf_counter()
        done = subprocess.run(
            [os.path.abspath(program), "--self-check"],
            capture_output=True,
            text=True,
            env=env,
            cwd=home,
            timeout=300,
        )
        took = time.perf_counter() - began
    shown = [line for line in done.stdout.splitlines() if "window shown after" in line]
    if done.returncode != 0 or not shown:
        print(f"self-check failed ({done.returncode}):\n{done.stdout}{done.stderr}")
        return 1
    print(f"after {shown[0].rsplit(' after ', 1)[1]}; the whole self-check took {took:.2f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
