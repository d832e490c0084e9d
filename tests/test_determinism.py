"""No lost work and determinism: same brief and seed give identical files, with one worker
process or two."""

from __future__ import annotations

from pathlib import Path

from supplydesign.cli import main

BRIEF = Path(__file__).parent / "data" / "briefs" / "small-crc.toml"


def _run(out: Path, workers: int) -> dict[str, bytes]:
    assert main(["synth", str(BRIEF), "--out", str(out), "--seed", "5", "--population", "16",
                 "--generations", "4", "--workers", str(workers)]) == 0
    return {str(p.relative_to(out)): p.read_bytes() for p in sorted(out.rglob("*")) if p.is_file()}


def test_same_seed_gives_identical_files_with_one_and_two_workers(tmp_path):
    a = _run(tmp_path / "a", 1)
    b = _run(tmp_path / "b", 1)
    c = _run(tmp_path / "c", 2)
    assert a.keys() == b.keys() == c.keys() and len(a) > 2
    assert a == b
    assert a == c


def test_a_second_run_into_the_same_folder_keeps_the_first(tmp_path, capsys):
    first = _run(tmp_path / "a", 1)
    assert main(["synth", str(BRIEF), "--out", str(tmp_path / "a"), "--seed", "6",
                 "--population", "16", "--generations", "4"]) == 2
    assert "--force" in capsys.readouterr().err
    again = {str(p.relative_to(tmp_path / "a")): p.read_bytes()
             for p in sorted((tmp_path / "a").rglob("*")) if p.is_file()}
    assert again == first
