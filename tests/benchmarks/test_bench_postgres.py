"""A shared catalogue on PostgreSQL against a SQLite file, on the same work.

Run: ``SHARPZONE_TEST_POSTGRES_URL=… python -m pytest tests/benchmarks/test_bench_postgres.py -m benchmark -s``
(skips without the variable). Figures are ratios PostgreSQL / SQLite on this machine, the
server on loopback: what a studio pays for sharing, before any network.
Goals (issue 7): ingest within 2 × SQLite's time, a rescan within 3 ×; 100,000 frames
written through ``upsert_rows`` within 3 ×; ``check`` over them within 2 × and under 2 s.
Measured on 2 cores (December 2026, two runs): ingest 1.23–1.35 ×, rescan 0.65–1.03 ×,
bulk write 1.53 ×, check 1.01–1.11 × (1.56–1.64 s).
"""

from __future__ import annotations

import pytest

from tests.benchmarks.test_bench_check import FILL, FRAMES, MEASURE
from tests.benchmarks.test_bench_ingest import FILES, INGEST, _card, _run
from tests.conftest import _empty_postgres, postgres_test_url

pytestmark = pytest.mark.benchmark
ATTEMPTS = 2
# The check benchmark's catalogue, written the way the program writes many rows.
FILL_BY_UPSERT = FILL.replace("from sqlalchemy import insert", "from sharpzone.catalog.upsert import upsert_rows").replace(
    "session.execute(insert(Frame), rows)", "upsert_rows(session, Frame, rows, ['path'])")


def _best(url_for_attempt, script, *args, key):
    return min((_run(script, url_for_attempt(attempt), *args) for attempt in range(ATTEMPTS)), key=lambda run: run[key])


def test_ingest_on_postgresql_against_sqlite(tmp_path):
    server = postgres_test_url()
    _card(tmp_path / "card", FILES)
    on_sqlite = _best(lambda attempt: f"sqlite:///{tmp_path / f'bench{attempt}.sqlite'}", INGEST, tmp_path / "card",
                      key="first")
    on_postgres = _best(lambda attempt: _empty_postgres(server), INGEST, tmp_path / "card", key="first")
    first_ratio = on_postgres["first"] / on_sqlite["first"]
    rescan_ratio = on_postgres["rescan"] / on_sqlite["rescan"]
    print(f"\ningest {FILES:,} JPEGs: SQLite {on_sqlite['first']:.2f} s, PostgreSQL {on_postgres['first']:.2f} s "
          f"(ratio {first_ratio:.2f}); rescan SQLite {on_sqlite['rescan']:.3f} s, PostgreSQL "
          f"{on_postgres['rescan']:.3f} s (ratio {rescan_ratio:.2f})")
    assert on_postgres["added"] == FILES and on_postgres["unchanged"] == FILES
    assert first_ratio <= 2.0
    assert rescan_ratio <= 3.0


def test_bulk_insert_and_check_on_postgresql_against_sqlite(tmp_path):
    import subprocess
    import sys
    import time

    server = postgres_test_url()
    figures = {}
    for name, url in (("SQLite", f"sqlite:///{tmp_path / 'big.sqlite'}"), ("PostgreSQL", _empty_postgres(server))):
        start = time.perf_counter()
        subprocess.run([sys.executable, "-c", FILL_BY_UPSERT, url, str(FRAMES)], check=True)
        fill = time.perf_counter() - start
        check = min((_run(MEASURE, url) for _ in range(ATTEMPTS)), key=lambda run: run["seconds"])
        assert check["frames"] == FRAMES
        figures[name] = (fill, check)
    (fill_sqlite, check_sqlite), (fill_postgres, check_postgres) = figures["SQLite"], figures["PostgreSQL"]
    assert check_sqlite["flagged"] == check_postgres["flagged"]  # same verdicts on both
    check_ratio = check_postgres["seconds"] / check_sqlite["seconds"]
    print(f"\n{FRAMES:,} frames: fill SQLite {fill_sqlite:.1f} s, PostgreSQL {fill_postgres:.1f} s "
          f"(ratio {fill_postgres / fill_sqlite:.2f}); check SQLite {check_sqlite['seconds']:.2f} s, "
          f"PostgreSQL {check_postgres['seconds']:.2f} s (ratio {check_ratio:.2f})")
    assert fill_postgres / fill_sqlite <= 3.0
    assert check_ratio <= 2.0
    assert check_postgres["seconds"] < 2.0
