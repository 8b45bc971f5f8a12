"""Schema migrations: a store of an older version opens and is upgraded in place, keeping its runs;
the migrations build exactly the layout the store's queries are written for, on every back end."""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from store_helpers import add, begin, committed, execute

from harness.store import SCHEMA_VERSION, Store, StoreError
from harness.store import schema as layout
from harness.store.database import create
from harness.store.migrate import MIGRATIONS, revision

FIXTURES = Path(__file__).with_name("fixtures")
V1_RUN = "20261202-140705-134e"  # see fixtures/README.md


def test_a_version_1_store_file_opens_and_is_upgraded_in_place(tmp_path):
    shutil.copy(FIXTURES / "schema-v1.sqlite", tmp_path / "harness.sqlite")
    assert committed(tmp_path / "harness.sqlite", "SELECT value FROM meta WHERE key = 'schema_version'") == "1"
    with Store(tmp_path) as store:
        run = store.run(V1_RUN)
        assert (run["status"], run["samples"], run["unit"]) == ("passed", 25, "NT-0412 (50 kVA, 6600/415 V)")
        assert run["station_id"] == run["host"] and run["station_id"]  # filled from the host by migration 0002
        assert [s["name"] for s in run["steps"]] == ["no-load at rated voltage"]
        assert [e["text"] for e in run["events"]] == ["v1 fixture run"] and run["events"][0]["data"] == {"k": 1}
        assert [i["role"] for i in run["instruments"]] == ["analyser"]
        assert run["readings"][0]["u_rms_mean"] == 415.0 and run["readings"][0]["stable"] is True
        assert run["results"] == {"no_load": {"loss_w": 160.0}}
        assert store.samples(V1_RUN)["u_rms"].tolist() == [415.0 + i for i in range(25)]
        new = begin(store)
        add(store, new, 3)
        assert [r["run_id"] for r in store.runs(station=run["host"])] == [V1_RUN, new]
    path = tmp_path / "harness.sqlite"
    assert committed(path, "SELECT value FROM meta WHERE key = 'schema_version'") == str(SCHEMA_VERSION)
    assert committed(path, "SELECT version_num FROM alembic_version") == revision(SCHEMA_VERSION)
    assert committed(path, "PRAGMA integrity_check") == "ok"
    with Store(tmp_path) as store:  # a second opening finds it current and changes nothing
        assert len(store.runs()) == 2


def test_migrations_build_the_layout_the_queries_are_written_for(store_url, tmp_path):
    with Store(tmp_path, url=store_url):
        pass
    engine = create(store_url)
    try:
        with engine.connect() as conn:
            differences = compare_metadata(MigrationContext.configure(conn), layout.metadata)
    finally:
        engine.dispose()
    assert differences == []


def test_a_version_1_store_on_any_back_end_is_upgraded(store_url, tmp_path):
    from alembic import command
    from alembic.config import Config

    engine = create(store_url)
    try:
        with engine.connect() as conn, conn.begin():
            config = Config()
            config.set_main_option("script_location", str(MIGRATIONS))
            config.attributes["connection"] = conn
            command.upgrade(config, revision(1))
    finally:
        engine.dispose()
    with Store(tmp_path, url=store_url) as store:
        assert store.runs() == []
        run_id = begin(store)
        assert store.run(run_id)["station_id"]
    with Store(tmp_path, url=store_url) as store:
        assert execute(store, "SELECT value FROM meta WHERE key = 'schema_version'") == str(SCHEMA_VERSION)


def test_a_store_from_a_newer_harness_is_refused(store_url, tmp_path):
    with Store(tmp_path, url=store_url) as store:
        execute(store, "UPDATE meta SET value = ? WHERE key = 'schema_version'", (str(SCHEMA_VERSION + 1),))
    with pytest.raises(StoreError, match="newer harness"):
        Store(tmp_path, url=store_url)


def test_an_older_version_than_any_known_is_refused(tmp_path):
    with Store(tmp_path) as store:
        execute(store, "UPDATE meta SET value = '0' WHERE key = 'schema_version'")
    with pytest.raises(StoreError, match="older than any"):
        Store(tmp_path)


def test_every_migration_is_numbered_in_order():
    files = sorted(p.name for p in (MIGRATIONS / "versions").glob("*.py"))
    assert [name[:4] for name in files] == [revision(n) for n in range(1, SCHEMA_VERSION + 1)]


def test_stations_opening_a_new_store_at_once_create_it_once(store_url, tmp_path):
    script = ("import sys; from pathlib import Path; sys.path.insert(0, sys.argv[3]); from harness.store import Store; "
              "s = Store(Path(sys.argv[1]), url=sys.argv[2]); "
              "print(s.begin_run(unit='u', lab='l', station_name='n', sequence_text='', station_text=None, "
              "software_version='v')); s.close()")
    repo = str(Path(__file__).resolve().parents[2])
    children = [subprocess.Popen([sys.executable, "-c", script, str(tmp_path), store_url, repo],
                                 stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True) for _ in range(4)]
    outputs = [child.communicate(timeout=120) for child in children]
    assert [child.returncode for child in children] == [0] * 4, [err for _, err in outputs]
    with Store(tmp_path, url=store_url) as store:
        assert sorted(r["run_id"] for r in store.runs()) == sorted(out.strip() for out, _ in outputs)
        assert execute(store, "SELECT COUNT(*) FROM meta WHERE key = 'schema_version'") == 1
