"""The worksheet's cost per request does not grow with the rest of the study.

One node is shown, but the totals of the whole study are too. These tests count the SQL
statements and the ORM objects a request loads on a study of 1 node and on one of 40 nodes
(built by importing a generated, invented study file), and check that the totals shown
equal those of the whole-study path (load_study_tree + totals_of) on the same data.
"""

import json
import re
from collections import Counter
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from html.parser import HTMLParser
from typing import Any

import pytest
from fastapi.testclient import TestClient
from httpx import Response
from sqlalchemy import Engine, event
from sqlmodel import Session, select

import app.services.study.stored_results as stored_module
import app.services.study.tree as tree_module
from app.db.models import Deviation, Node, Safeguard, Scenario, Step, Study
from app.likelihood.types import StepKind
from app.services.exchange.study_import import import_study_text
from app.services.study.listing import NodeTotals, totals_of
from app.services.study.stored_results import ensure_current
from app.services.study.totals import study_totals
from app.services.study.tree import load_node_tree, load_study_tree
from bench.client import FieldForm
from tests.helpers import HX

LARGE = 40
STEPS_PER_NODE = 7  # 2 + 3 + 2 steps in the three scenarios of every generated node
CONTENT = (Node, Deviation, Scenario, Step, Safeguard)


def generated_scenarios(node: int) -> list[dict[str, Any]]:
    """Three invented scenarios whose numbers differ from node to node."""
    def initiating(per_year: float) -> dict[str, Any]:
        return {"kind": "initiating_event", "description": "Control loop failure",
                "value": per_year}
    return [
        {"ref": f"N{node}-S1", "cause": "Level control fails high", "severity": "P",
         "steps": [initiating(0.1 / node),
                   {"kind": "ipl", "description": "High level trip", "value": 0.01}]},
        {"ref": f"N{node}-S2", "cause": "Inlet valve left open", "severity": "A",
         "environment_severity": "E",  # the environment rating is the most demanding
         "steps": [initiating(0.01 / node),
                   {"kind": "enabling_condition", "description": "Tank filling", "value": 0.5},
                   {"kind": "ipl", "description": "Operator response", "value": 0.1,
                    "credited": False}],
         "safeguards": [{"description": "Level gauge glass"}]},
        {"ref": f"N{node}-S3", "cause": "Pump seal leaks", "severity": "A",
         "steps": [initiating(1e-3), {"kind": "ipl", "description": "Relief valve",
                                      "value": 0.1}]},
    ]


def generated_study(node_count: int) -> str:
    """An invented study file of `node_count` nodes, one deviation and three scenarios each."""
    return json.dumps({
        "format": "tallyroom-study", "schema_version": 1, "invented": True,
        "study": {"title": f"Scale study of {node_count} nodes (invented)"},
        "severity_categories": [
            {"ref": "P", "name": "Injury", "tolerable_frequency": 1e-5},
            {"ref": "E", "name": "Reportable release", "tolerable_frequency": 1e-6,
             "receptor": "environment"},
            {"ref": "A", "name": "Plant damage", "tolerable_frequency": 1e-3,
             "receptor": "asset"},
        ],
        "nodes": [{"number": str(n), "name": f"Invented unit {n}",
                   "deviations": [{"guideword": "More", "parameter": "Level",
                                   "scenarios": generated_scenarios(n)}]}
                  for n in range(1, node_count + 1)],
        "recommendations": [{"text": "Add an independent level trip", "scenarios": ["N1-S1"]}],
    })


def imported_study(session: Session, node_count: int) -> Study:
    """The generated study, imported; its last node's third scenario lost its initiating event
    (so the totals include a scenario that cannot be computed)."""
    study = import_study_text(session, generated_study(node_count))
    last = session.exec(select(Step).join(Scenario).where(
        Scenario.study_id == study.id, Step.kind == StepKind.INITIATING_EVENT)
        .order_by(Step.id.desc())).first()  # type: ignore[union-attr]
    assert last is not None
    session.delete(last)
    session.commit()
    ensure_current(session, study.id or 0)  # a study in use: its stored results are built
    return study


def first_node(session: Session, study: Study) -> Node:
    """The study's first node."""
    return session.exec(select(Node).where(Node.study_id == study.id, Node.position == 0)).one()


def trip_of_first_node(session: Session, study: Study) -> Step:
    """The high level trip of the first node's first scenario."""
    node_id = first_node(session, study).id
    return session.exec(select(Step).join(Scenario).join(Deviation).where(
        Deviation.node_id == node_id, Step.description == "High level trip")).one()


@dataclass
class Cost:
    """What one request did: SQL statements sent, the content rows it loaded as objects, and
    (on SQLite) the rows its SELECTs returned and the full table scans among them."""

    statements: int = 0
    rows: set[tuple[str, int]] = field(default_factory=set)
    rows_returned: int = 0
    full_scans: list[str] = field(default_factory=list)
    vm_steps: int = 0

    @property
    def loaded(self) -> Counter[str]:
        """How many distinct rows of each model were loaded (a row loaded twice counts once)."""
        return Counter(name for name, _ in self.rows)


# "SCAN CONSTANT ROW" is a SELECT without a table (scalar subqueries side by side), no scan.
FULL_SCAN = re.compile(r"^SCAN (?!CONSTANT ROW)(\w+)(?! USING)")


def read_by_statement(cursor: Any, statement: str, parameters: Any, cost: Cost) -> None:
    """Add the rows a SELECT returns and any full table scan in its plan (SQLite only).

    Both are asked on the statement's own connection, so they see its transaction.
    """
    if not statement.lstrip().upper().startswith("SELECT") or not hasattr(
            cursor.connection, "create_function"):
        return
    connection = cursor.connection
    # Every step of SQLite's virtual machine running the statement, so rows walked through an
    # index count too (asked here, on a copy of the statement, before the driver runs it).
    connection.set_progress_handler(lambda: _count_step(cost), 1)
    try:
        connection.execute(statement, parameters).fetchall()
    finally:
        connection.set_progress_handler(None, 1)
    cost.rows_returned += connection.execute(
        f"SELECT count(*) FROM ({statement})", parameters).fetchone()[0]
    for plan in connection.execute(f"EXPLAIN QUERY PLAN {statement}", parameters):
        scanned = FULL_SCAN.match(plan[-1])
        if scanned:
            cost.full_scans.append(f"{scanned.group(1)} in {statement[:300]}")


def _count_step(cost: Cost) -> int:
    cost.vm_steps += 1
    return 0  # carry on


@contextmanager
def measured(db_engine: Engine) -> Iterator[Cost]:
    """Count statements, loaded content objects and (SQLite) rows returned while it runs."""
    cost = Cost()

    def count_statement(_conn: Any, cursor: Any, statement: str, parameters: Any,
                        *_args: Any) -> None:
        cost.statements += 1
        read_by_statement(cursor, statement, parameters, cost)

    def count_load(target: Any, _context: Any) -> None:
        cost.rows.add((type(target).__name__, target.id))

    event.listen(db_engine, "before_cursor_execute", count_statement)
    for model in CONTENT:
        event.listen(model, "load", count_load)
    try:
        yield cost
    finally:
        event.remove(db_engine, "before_cursor_execute", count_statement)
        for model in CONTENT:
            event.remove(model, "load", count_load)


Send = Callable[[], Response]


def view_worksheet(client: TestClient, session: Session, study: Study) -> Send:
    """The first node's worksheet page."""
    url = f"/studies/{study.id}/nodes/{first_node(session, study).id}"
    return lambda: client.get(url)


def edit_value(client: TestClient, session: Session, study: Study) -> Send:
    """A keystroke reply: the first node's trip typed as 1 in 1000."""
    url = f"/studies/{study.id}/steps/{trip_of_first_node(session, study).id}/value"
    return lambda: client.post(url, data={"value_text": "1 in 1000"}, headers=HX)


def view_room(client: TestClient, session: Session, study: Study) -> Send:
    """The room view (no focus yet: the study's first scenario)."""
    url = f"/studies/{study.id}/room"
    return lambda: client.get(url)


def steps_of_first_node(session: Session, study: Study) -> int:
    """How many steps the first node has."""
    node_id = first_node(session, study).id
    return len(session.exec(select(Step).join(Scenario).join(Deviation).where(
        Deviation.node_id == node_id)).all())


@pytest.mark.parametrize("prepared", [view_worksheet, view_room],
                         ids=["worksheet GET", "room GET"])
def test_a_request_costs_the_same_on_1_node_as_on_40_nodes(
    client: TestClient, session: Session, db_engine: Engine,
    prepared: Callable[[TestClient, Session, Study], Send],
) -> None:
    costs = []
    for node_count in (1, LARGE):
        study = imported_study(session, node_count)
        send = prepared(client, session, study)
        with measured(db_engine) as cost:
            assert send().status_code == 200
        costs.append((cost, steps_of_first_node(session, study)))
    (small, small_steps), (large, large_steps) = costs
    assert large_steps == small_steps + 1 == STEPS_PER_NODE  # the small study lost one step
    assert large.statements == small.statements
    if prepared is view_room:  # the room shows the scenario in focus: only it is loaded
        assert large.loaded == small.loaded
        assert large.loaded["Scenario"] == 1
        return
    assert large.loaded["Step"] == large_steps and small.loaded["Step"] == small_steps
    assert large.loaded["Scenario"] == small.loaded["Scenario"] == 3
    assert large.loaded["Node"] == small.loaded["Node"] == 1


@dataclass
class Computed:
    """The scenarios a request computed: for the stored results, and for the page it answers."""

    stored: list[int] = field(default_factory=list)
    shown: list[int] = field(default_factory=list)


def count_computed(monkeypatch: pytest.MonkeyPatch) -> Computed:
    """Count every scenario computed through the stored-results path and the worksheet's."""
    computed = Computed()
    store, show = stored_module.scenario_columns, tree_module.compute_outcome

    def stored(rating: Any, *args: Any) -> Any:
        computed.stored.append(rating.id)
        return store(rating, *args)

    def shown(scenario: Any, *args: Any) -> Any:
        computed.shown.append(scenario.id)
        return show(scenario, *args)

    monkeypatch.setattr(stored_module, "scenario_columns", stored)
    monkeypatch.setattr(tree_module, "compute_outcome", shown)
    return computed


EDIT_STATEMENTS = 23  # 36 before the edit path was trimmed (issue 14), 27 before the reply
# took the refresh's spread inputs, 25 before a typed number stopped reading the word scale,
# 24 before the guarded save stopped reading again the row it already held


def keystroke(seq: int, text: str) -> dict[str, str]:
    """A value field's keystroke as the worksheet script sends it (page id and sequence)."""
    return {"value_text": text, "client": "page-under-test", "seq": str(seq)}


def test_a_value_edit_reads_and_computes_the_same_on_1_node_as_on_40_nodes(
    client: TestClient, session: Session, db_engine: Engine, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The guard of the edit path: one keystroke reads the same rows (SQLite's own count of
    rows returned and of machine steps, so rows walked through an index count too) and
    computes one scenario, on a study 40 times larger."""
    if db_engine.dialect.name != "sqlite":
        pytest.skip("rows returned, plans and machine steps are asked of SQLite")
    runs = []
    for node_count in (1, LARGE):
        study = imported_study(session, node_count)
        trip = trip_of_first_node(session, study)
        url = f"/studies/{study.id}/steps/{trip.id}/value"
        # The page's first keystroke starts the field's log entry and its sequence; the one
        # measured is the next, as the page sends it (sequence, version and original).
        assert client.post(url, data=keystroke(1, "1 in 1000"), headers=HX).status_code == 200
        session.refresh(trip)
        sent = {**keystroke(2, "1 in 500"), "version": str(trip.version),
                "orig_value_text": trip.value_text or ""}
        computed = count_computed(monkeypatch)
        with measured(db_engine) as cost:
            answer = client.post(url, data=sent, headers=HX)
        assert answer.status_code == 200
        runs.append((cost, computed))
        monkeypatch.undo()
    (small, small_computed), (large, large_computed) = runs
    for computed in (small_computed, large_computed):
        assert len(computed.stored) == len(computed.shown) == 1  # the edited scenario, once
    assert large.statements == small.statements
    # Who may ask; the step (a typed number reads no word scale); the keystroke claim; the
    # content version, the guarded UPDATE and the step's UPDATE; the change
    # log's look-up and fold; the written text; the stored row (locked), its inputs (steps,
    # ratings, categories, the study row and its rounds for the spread) and its UPDATE; the
    # reply's scenario with its parents, categories, steps, safeguards, number, actions and
    # counts (the spread's study row and rounds are the refresh's). One more is a cost every
    # keystroke pays.
    assert large.statements <= EDIT_STATEMENTS, large.statements
    assert large.rows_returned == small.rows_returned
    assert large.full_scans == []
    assert large.loaded == small.loaded == Counter({"Step": 2, "Scenario": 1, "Node": 1,
                                                    "Deviation": 1})
    # A deeper index costs a seek a few machine steps; reading the study would cost 40 times more.
    assert large.vm_steps <= small.vm_steps * 1.02


ORM_LOOKUPS = 1  # session.get of the step


def test_a_keystroke_runs_statements_built_once_except_the_orms_row_lookups(
    client: TestClient, session: Session, db_engine: Engine
) -> None:
    """Building a statement and working out its cache key cost about as much as SQLite
    running it, so the statements a keystroke runs are built once per process. Only the
    ORM's own look-ups by primary key are built per call (the ORM's business)."""
    study = imported_study(session, 1)
    trip = trip_of_first_node(session, study)
    url = f"/studies/{study.id}/steps/{trip.id}/value"
    seen: list[list[Any]] = []  # the statements themselves: held, no id is reused

    def note(_conn: Any, statement: Any, *_args: Any) -> None:
        seen[-1].append(statement)

    # The page's hidden version and saved text, taken from each reply as htmx swaps them in.
    form = FieldForm(f"step-{trip.id}", "value_text", str(trip.version), trip.value_text or "")
    event.listen(db_engine, "before_execute", note)
    try:
        for seq, text in enumerate(("1 in 1000", "1 in 500", "1 in 200"), start=1):
            seen.append([])
            answer = client.post(url, headers=HX, data={**keystroke(seq, text), **form.sent()})
            assert answer.status_code == 200
            form.read(answer.text)
    finally:
        event.remove(db_engine, "before_execute", note)
    second, third = seen[1], seen[2]
    assert len(second) == len(third)
    rebuilt = sum(a is not b for a, b in zip(second, third, strict=True))
    assert rebuilt <= ORM_LOOKUPS, rebuilt


def test_the_room_poll_reads_one_row_at_any_size(client: TestClient, session: Session,
                                                 db_engine: Engine) -> None:
    if db_engine.dialect.name != "sqlite":
        pytest.skip("rows returned, plans and machine steps are asked of SQLite")
    costs = []
    for node_count in (1, LARGE):
        study = imported_study(session, node_count)
        stamp_page = client.get(f"/studies/{study.id}/room").text
        stamp = re.search(r"stamp=([0-9a-f-]+)", stamp_page)
        assert stamp is not None
        with measured(db_engine) as cost:
            answer = client.get(f"/studies/{study.id}/room/live?stamp={stamp.group(1)}",
                                headers=HX)
        assert answer.status_code == 204
        costs.append(cost)
    small, large = costs
    # One row each: the access state (who may ask), and the study's stamp columns with the
    # aggregates of its estimate rounds and answers (a round shows on the room view) in one.
    assert large.statements == large.rows_returned == 2 and large.full_scans == []
    # The database does the same work whatever the study's size: counting a study's rows
    # through an index would walk 40 times more of them.
    assert large.vm_steps == small.vm_steps


class ShownTotals(HTMLParser):
    """The totals lists (#node-totals, #study-totals) as {label: shown value}."""

    def __init__(self) -> None:
        super().__init__()
        self.values: dict[str, str] = {}
        self.inside = 0
        self.label: str | None = None
        self.tag = ""

    def handle_starttag(self, tag: str, attrs: list) -> None:  # type: ignore[type-arg]
        if tag == "dl" and dict(attrs).get("id") in ("node-totals", "study-totals"):
            self.inside += 1
        self.tag = tag

    def handle_endtag(self, tag: str) -> None:
        if tag == "dl" and self.inside:
            self.inside -= 1

    def handle_data(self, data: str) -> None:
        if not self.inside or not data.strip():
            return
        if self.tag == "dt":
            self.label = data.strip()
        elif self.tag == "dd" and self.label:
            self.values[self.label] = data.strip()


def shown_totals(html: str) -> dict[str, str]:
    """The node and study totals a page or fragment shows."""
    parser = ShownTotals()
    parser.feed(html)
    return parser.values


def as_shown(node: NodeTotals, study: NodeTotals) -> dict[str, str]:
    """Totals as the worksheet prints them."""
    return {
        "Node scenarios": str(node.scenario_count),
        "Node short of target": str(node.short_count),
        "Node short with flagged credits withdrawn": str(node.short_withdrawn_count),
        "Study scenarios": str(study.scenario_count),
        "Study short of target": str(study.short_count),
        "Study short with flagged credits withdrawn": str(study.short_withdrawn_count),
    }


def whole_study_totals(session: Session, study: Study, node_id: int) -> dict[str, str]:
    """The node's and the study's totals computed the old way, from the whole study tree."""
    session.expire_all()
    tree = load_study_tree(session, study.id or 0)
    node = next(n for n in tree.nodes if n.node.id == node_id)
    return as_shown(totals_of(node.scenario_branches()), totals_of(tree.scenario_branches()))


@pytest.mark.parametrize("prepared", [view_worksheet, edit_value],
                         ids=["worksheet GET", "value-edit POST"])
def test_the_totals_shown_equal_the_whole_study_path(
    client: TestClient, session: Session, prepared: Callable[[TestClient, Session, Study], Send]
) -> None:
    study = imported_study(session, LARGE)
    node_id = first_node(session, study).id or 0
    shown = shown_totals(prepared(client, session, study)().text)
    expected = whole_study_totals(session, study, node_id)
    assert shown == expected
    assert expected["Study scenarios"] == str(3 * LARGE)
    assert expected["Study short of target"] == str(2 * LARGE)


def test_light_totals_match_the_tree_for_every_node_to_the_last_bit(session: Session) -> None:
    study = imported_study(session, LARGE)
    tree = load_study_tree(session, study.id or 0)
    light = study_totals(session, study.id or 0)
    assert light.study == totals_of(tree.scenario_branches())
    assert light.study.unresolved_count == 1
    for node_branch in tree.nodes:
        assert light.of_node(node_branch.node.id or 0) == totals_of(node_branch.scenario_branches())


def test_a_node_tree_is_that_node_of_the_study_tree(session: Session) -> None:
    study = imported_study(session, 3)
    whole = load_study_tree(session, study.id or 0)
    for node_branch in whole.nodes:
        alone = load_node_tree(session, study.id or 0, node_branch.node.id or 0).node
        assert [(s.scenario.id, [step.id for step in s.steps], s.outcome)
                for s in alone.scenario_branches()] == [
            (s.scenario.id, [step.id for step in s.steps], s.outcome)
            for s in node_branch.scenario_branches()]


def test_importing_40_nodes_sends_as_many_statements_as_importing_1(
    session: Session, db_engine: Engine
) -> None:
    statements = []
    for node_count in (1, LARGE):
        text = generated_study(node_count)
        with measured(db_engine) as cost:
            import_study_text(session, text)
        statements.append(cost.statements)
    assert statements[0] == statements[1]
