"""Rewrite every command output shown in README.md by running the command again.

A block is marked in the README as

    <!-- output: clockplan plan -->
    ```
    … whatever the command printed …
    ```

Run ``python scripts/refresh_readme.py`` after a change that alters any output;
``tests/test_readme.py`` fails while the README is stale (timings aside).
"""

from __future__ import annotations

import re
import shlex
import subprocess
import sys
from pathlib import Path

README = Path(__file__).resolve().parent.parent / "README.md"
BLOCK = re.compile(
    r"(<!-- output: (?P<command>[^\n]+?) -->\n```\n)(?P<body>(?:(?!```\n).*\n)*?)(```\n)"
)


def command_output(command: str) -> str:
    """What ``command`` (a clockplan command line) prints on an 80-column terminal."""
    argv = shlex.split(command)
    assert argv[0] == "clockplan", f"only clockplan commands belong in the README: {command}"
    completed = subprocess.run(
        [sys.executable, "-m", "clockplan", *argv[1:]],
        capture_output=True,
        text=True,
        check=False,
        env={"COLUMNS": "80", "TERM": "dumb", "PATH": "/usr/bin:/bin"},
        cwd=README.parent,
    )
    return (completed.stdout + completed.stderr).rstrip("\n")


def refreshed(text: str) -> str:
    """The README text with every marked block replaced by fresh output."""
    return BLOCK.sub(
        lambda m: m.group(1) + command_output(m.group("command")) + "\n" + m.group(4), text
    )


def blocks(text: str) -> list[tuple[str, str]]:
    """Every (command, shown output) pair of the README."""
    return [(m.group("command"), m.group("body")) for m in BLOCK.finditer(text)]


if __name__ == "__main__":
    README.write_text(refreshed(README.read_text(encoding="utf-8")), encoding="utf-8")
