"""Two teams' queues with the same manifest name share one PostgreSQL database without mixing.

The check is against the PostgreSQL server itself (the throw-away server of tests/pg_server.py): each
team's consensus must hold only its own graders' grades, and the rows in the database must carry two
different queue ids.
"""

import json
import multiprocessing

import pytest

from lensmass.core.errors import LensInputError
from lensmass.io.queue_identity import identity_path_beside, queue_identity
from lensmass.io.store import open_store


def _team_manifest(folder):
    folder.mkdir()
    manifest = folder / "night.csv"
    manifest.write_text("id\nC-1\nC-2\n")
    return manifest


def test_two_teams_night_csv_side_by_side_on_one_postgresql_database(postgres_url, tmp_path):
    psycopg = pytest.importorskip("psycopg")
    team_a = _team_manifest(tmp_path / "team-a")
    team_b = _team_manifest(tmp_path / "team-b")
    with open_store(postgres_url, team_a, grader="ana") as ana, open_store(postgres_url, team_b, grader="bo") as bo:
        assert ana.queue != bo.queue
        ana.add_grade("C-1", 3)
        bo.add_grade("C-1", 0)
        bo.add_grade("C-2", 1, note="team b only")
        # a second grader of team A opens the same manifest: same queue, sees A's grades only
        with open_store(postgres_url, team_a, grader="cy") as cy:
            assert cy.queue == ana.queue
            cy.add_grade("C-1", 2)
            cons_a = {c["candidate"]: c for c in cy.consensus()}
        cons_b = {c["candidate"]: c for c in bo.consensus()}
    assert cons_a["C-1"]["grades"] == {"ana": 3, "cy": 2} and "C-2" not in cons_a
    assert cons_b["C-1"]["grades"] == {"bo": 0} and cons_b["C-2"]["notes"] == {"bo": "team b only"}
    with psycopg.connect(postgres_url) as conn:  # what the server holds
        queues = {q for (q,) in conn.execute("SELECT DISTINCT queue FROM lm_grades WHERE queue LIKE 'night-%%'")}
    assert {queue_identity(team_a), queue_identity(team_b)} <= queues


def test_the_identity_is_kept_beside_the_manifest_and_read_back(tmp_path):
    manifest = _team_manifest(tmp_path / "t")
    first = queue_identity(manifest)
    assert first.startswith("night-") and len(first) == len("night-") + 12
    path = identity_path_beside(manifest)
    assert path.name == "night.queue.json" and json.loads(path.read_text())["queue_id"] == first
    assert queue_identity(manifest) == first
    assert [p.name for p in path.parent.iterdir() if p.name.startswith(".")] == []  # no temporary left


def test_a_damaged_identity_file_is_one_sentence(tmp_path):
    manifest = _team_manifest(tmp_path / "t")
    identity_path_beside(manifest).write_text("{not json")
    with pytest.raises(LensInputError, match="is damaged"):
        open_store(str(tmp_path / "shared.sqlite"), manifest)


def test_the_default_store_beside_the_manifest_writes_no_identity_file(tmp_path):
    manifest = _team_manifest(tmp_path / "t")
    store = open_store(None, manifest)
    assert store.queue == "night" and not identity_path_beside(manifest).exists()


def _identity(manifest, out):
    out.put(queue_identity(manifest))


def test_graders_opening_a_new_queue_at_once_agree_on_its_identity(tmp_path):
    manifest = _team_manifest(tmp_path / "t")
    ctx = multiprocessing.get_context("spawn")
    out = ctx.Queue()
    procs = [ctx.Process(target=_identity, args=(manifest, out)) for _ in range(6)]
    for p in procs:
        p.start()
    for p in procs:
        p.join(60)
    ids = {out.get(timeout=10) for _ in procs}
    assert len(ids) == 1 and ids == {queue_identity(manifest)}
