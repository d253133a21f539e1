"""The drift command warns when the prediction date is past the recommended recalibration."""

from __future__ import annotations

import json
from pathlib import Path

from viscometry.cli import main

HISTORY = (
    Path(__file__).resolve().parents[1] / "examples" / "evidence" / "ubbelohde_4471_history.csv"
)


def _warnings(date: str, capsys) -> list[str]:
    assert main(["drift", str(HISTORY), "--date", date, "--json"]) == 0
    return json.loads(capsys.readouterr().out)["warnings"]


def test_overdue_is_a_warning_in_text_and_json(capsys) -> None:
    # next recommended date of the invented example: 2025-12-13 (its own regression value)
    late = _warnings("2026-05-01", capsys)
    assert any(w.startswith("recalibration overdue on 2026-05-01") for w in late)
    assert main(["drift", str(HISTORY), "--date", "2026-05-01"]) == 0
    assert "warning: recalibration overdue on 2026-05-01" in capsys.readouterr().out


def test_no_overdue_warning_within_the_interval(capsys) -> None:
    assert not any("overdue" in w for w in _warnings("2025-06-01", capsys))


def test_certificate_constants_keep_their_trailing_zeros(capsys) -> None:
    assert main(["drift", str(HISTORY), "--date", "2025-06-01"]) == 0
    assert "C = 0.030020  U = 0.000021" in capsys.readouterr().out
