"""The plan's terminal table: a piece without a program says so instead of a number."""

from __future__ import annotations

from types import SimpleNamespace

from wirecut.config import default_job
from wirecut.plan import Plan


def _piece(pid: str, minutes: float | None):
    program = SimpleNamespace(machine_time_s=60.0 * minutes) if minutes is not None else None
    deviation = SimpleNamespace(max_abs_mm=0.3, rms_mm=0.1, feasible_area_fraction=1.0)
    return SimpleNamespace(
        piece=SimpleNamespace(id=pid, stock="long"), program=program, deviation=deviation
    )


def _table(pieces):
    summary = {
        "feasible_area_fraction": 1.0, "max_deviation_mm": 0.3, "pieces": len(pieces),
        "blocks_used": 1, "foam_volume_m3": 1.0, "kept_volume_m3": 0.5, "waste_fraction": 0.5,
        "machine_time_s": sum(p.program.machine_time_s for p in pieces if p.program),
    }  # fmt: skip
    fake = SimpleNamespace(
        summary=lambda: summary,
        job=default_job(),
        split=SimpleNamespace(lower_bound=1),
        pieces=tuple(pieces),
    )
    return Plan.table(fake)


def test_a_piece_without_a_program_shows_no_time_and_the_total_says_how_many():
    lines = _table([_piece("P01", 7.5), _piece("P02", None), _piece("P03", 6.0)])
    text = "\n".join(lines)
    assert "nan" not in text
    row = next(line for line in lines if line.strip().startswith("P02"))
    assert row.endswith("no program")
    assert next(line for line in lines if "P01" in line).endswith("7.5 min")
    total = next(line for line in lines if "machine time" in line)
    assert "13.5 min" in total and "(2 of 3 pieces have a program)" in total


def test_every_piece_programmed_keeps_the_total_plain():
    lines = _table([_piece("P01", 7.5), _piece("P02", 2.5)])
    total = next(line for line in lines if "machine time" in line)
    assert total.rstrip().endswith("10.0 min")
