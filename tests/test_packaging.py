"""The wheel carries every data file the product reads at run time (profiles, scenarios,
report templates): README's first command runs from an installed package, not a checkout."""

from __future__ import annotations

import subprocess
import sys
import zipfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_wheel_holds_the_run_time_data(tmp_path: Path) -> None:
    proc = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "-q",
                           "-w", str(tmp_path), str(ROOT)], capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr
    names = set(zipfile.ZipFile(next(tmp_path.glob("*.whl"))).namelist())
    wanted = [*(f"sim_configs/{p.name}" for p in (ROOT / "sim_configs").glob("*.yaml")),
              *(f"drivers/profiles/{p.name}" for p in (ROOT / "drivers" / "profiles").glob("*.yaml")),
              *(str(p.relative_to(ROOT)) for p in (ROOT / "harness" / "report" / "templates").iterdir())]
    missing = [w for w in wanted if w not in names]
    assert not missing, missing
    assert any(n.endswith("entry_points.txt") for n in names)
