"""The sequences of a folder (``harness check DIR``, ``pytest --rehearse DIR``).

Every ``*.yaml``/``*.yml`` file directly in the folder is a sequence, except scenario files
(``kind: scenario``, which a sequence's ``rehearse.scenario`` may name) and station files (a
top-level ``instruments:``), which a lab keeps beside its sequences. Sub-folders (records,
schemas) are not read.
"""

from __future__ import annotations

import re
from pathlib import Path

from harness.common.errors import InputError
from harness.common.yamlio import read_input

SUFFIXES = (".yaml", ".yml")
_SCENARIO = re.compile(r"^kind:\s*scenario\s*$", re.MULTILINE)
_STATION = re.compile(r"^instruments:", re.MULTILINE)


def is_companion(path: Path) -> bool:
    """A scenario or station file kept beside the sequences (an unreadable file is no companion:
    it is a sequence that fails its own check)."""
    try:
        text = read_input(path)
    except InputError:
        return False
    return bool(_SCENARIO.search(text) or _STATION.search(text))


def sequence_files(folder: Path) -> list[Path]:
    return sorted(p for p in folder.iterdir()
                  if p.suffix in SUFFIXES and p.is_file() and not is_companion(p))
