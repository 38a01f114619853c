"""Seeded, invented study files of a chosen size, in the app's study-file JSON format.

The shape follows issue 14: about 10 deviations per node, about 20 scenarios per deviation,
4 to 6 steps per scenario, and one node (the second) of exactly 500 scenarios. Every name is
made up and the file says so (`"invented": true`). The JSON is written directly, without the
app's modules, so the generator does not move when the app's internals do; the unit test
validates its output with the app's schema.

    python -m bench.generate 10000 --seed 14 --out /tmp/study.json
"""

import argparse
import json
import random
from collections.abc import Iterator
from pathlib import Path
from typing import Any

DEFAULT_SEED = 14
LARGE_NODE_SCENARIOS = 500
LARGE_NODE_NUMBER = "2"
TYPICAL_NODE_NUMBER = "1"
DEVIATIONS_PER_NODE = (8, 12)  # about 10
SCENARIOS_PER_DEVIATION = (16, 24)  # about 20
STEPS_PER_SCENARIO = (4, 6)

Row = dict[str, Any]

CATEGORIES: list[Row] = [
    {"ref": "P1", "name": "P1 First aid case", "tolerable_frequency": 1e-2},
    {"ref": "P2", "name": "P2 Lost-time injury", "tolerable_frequency": 1e-3},
    {"ref": "P3", "name": "P3 Permanent injury", "tolerable_frequency": 1e-4},
    {"ref": "P4", "name": "P4 One fatality", "tolerable_frequency": 1e-5},
    {"ref": "P5", "name": "P5 Several fatalities", "tolerable_frequency": 1e-6},
    {"ref": "E1", "name": "E1 Release kept on site", "tolerable_frequency": 1e-3,
     "receptor": "environment"},
    {"ref": "E2", "name": "E2 Release off site", "tolerable_frequency": 1e-5,
     "receptor": "environment"},
    {"ref": "A1", "name": "A1 Moderate loss", "tolerable_frequency": 1e-2, "receptor": "asset"},
    {"ref": "A2", "name": "A2 Major loss", "tolerable_frequency": 1e-4, "receptor": "asset"},
]
PEOPLE = ["P1", "P2", "P3", "P4", "P5"]

# (description, value, value as said); every figure is invented for load, not for advice.
INITIATING = [
    ("Control loop fails", 0.1, "1 in 10 years"), ("Pump seal leaks", 0.1, "0.1/yr"),
    ("Operator lines up the wrong valve", 0.01, "1 in 100 years"),
    ("Cooling water supply lost", 0.1, "once in 10 years"),
    ("Small-bore fitting breaks", 0.01, "0.01"), ("Power to the unit lost", 0.5, "1 in 2 years"),
    ("Hose splits during transfer", 0.1, "3 in 30 years"),
]
ENABLING = [("Unit in start-up", 0.1, "1 in 10"), ("Vessel being filled", 0.5, "50%"),
            ("Batch held at high temperature", 0.3, "0.3")]
MODIFIERS = [("Release ignites", 0.1, "1 in 10"), ("Person present in the area", 0.25, "25%"),
             ("Injury is fatal", 0.5, "0.5")]
LAYERS = [("Alarm with operator response", 0.1, "1 in 10", "operator_response", None),
          ("High-high trip (invented SIF)", 0.01, "1 in 100", "sif", 2),
          ("Relief valve sized for this case", 0.01, "0.01", "relief_device", None),
          ("Bund holds the spill", 0.01, "1%", "passive", None),
          ("Independent control loop", 0.1, "0.1", "bpcs", None)]
EQUIPMENT = ["feed drum", "transfer pump", "reflux line", "storage tank", "reboiler",
             "condenser", "scrubber", "filter skid", "dosing pot", "heat exchanger"]
GUIDEWORDS = [("More", "Flow"), ("Less", "Flow"), ("No", "Flow"), ("Reverse", "Flow"),
              ("More", "Pressure"), ("Less", "Pressure"), ("More", "Temperature"),
              ("Less", "Temperature"), ("More", "Level"), ("Less", "Level"),
              ("Other than", "Composition"), ("As well as", "Contaminant")]


def deviation_sizes(total: int, rng: random.Random) -> list[list[int]]:
    """Scenario counts per deviation, per node, summing to exactly `total`.

    Node 2 holds LARGE_NODE_SCENARIOS (in deviations of 20) when the study is big enough;
    every other node has about 10 deviations of about 20 scenarios."""
    large = min(LARGE_NODE_SCENARIOS, max(total - 1, 0))
    rest = total - large
    typical: list[list[int]] = []
    while rest > 0:
        node: list[int] = []
        for _ in range(rng.randint(*DEVIATIONS_PER_NODE)):
            if rest == 0:
                break
            count = min(rest, rng.randint(*SCENARIOS_PER_DEVIATION))
            node.append(count)
            rest -= count
        typical.append(node)
    large_node = [20] * (large // 20) + ([large % 20] if large % 20 else [])
    return typical[:1] + ([large_node] if large_node else []) + typical[1:]


def scenario_steps(rng: random.Random, tag: str) -> list[Row]:
    """An initiating event, then enabling conditions, modifiers and at least one IPL."""
    description, value, said = rng.choice(INITIATING)
    steps: list[Row] = [{"kind": "initiating_event", "description": description,
                         "value": value, "value_text": said,
                         "basis": "Invented benchmark figure"}]
    others = rng.randint(STEPS_PER_SCENARIO[0] - 1, STEPS_PER_SCENARIO[1] - 1)
    drawn = rng.choices(["enabling_condition", "conditional_modifier", "ipl"],
                        weights=[0.15, 0.3, 0.55], k=others - 1)
    kinds = sorted([*drawn, "ipl"])
    for kind in kinds:
        if kind == "ipl":
            steps.append(ipl_step(rng, tag))
        else:
            table = ENABLING if kind == "enabling_condition" else MODIFIERS
            description, value, said = rng.choice(table)
            steps.append({"kind": kind, "description": description, "value": value,
                          "value_text": said})
    return steps


def ipl_step(rng: random.Random, tag: str) -> Row:
    """One protection layer; about one in twenty is listed but not credited."""
    description, value, said, ipl_type, sil = rng.choice(LAYERS)
    step: Row = {"kind": "ipl", "description": description, "value": value, "value_text": said,
                 "basis": "Invented benchmark figure", "credited": rng.random() > 0.05,
                 "ipl_type": ipl_type, "system_tag": f"XV-{tag}"}
    if sil is not None:
        step["sil_claimed"] = sil
    return step


def scenario(rng: random.Random, ref: str, node_number: str) -> Row:
    """One invented cause-consequence pair with its steps and safeguards."""
    equipment = rng.choice(EQUIPMENT)
    row: Row = {
        "ref": ref,
        "cause": f"Invented cause {ref}: {equipment} on bench unit {node_number} "
                 f"misbehaves during normal running",
        "consequence": f"Invented consequence {ref}: release from the {equipment}; "
                       f"a person nearby could be hurt",
        "severity": rng.choice(PEOPLE),
        "steps": scenario_steps(rng, f"{node_number}-{ref}"),
        "safeguards": [{"description": f"Invented safeguard {k + 1} on the {equipment}"}
                       for k in range(rng.randint(0, 2))],
    }
    if rng.random() < 0.3:
        row["environment_severity"] = rng.choice(["E1", "E2"])
    if rng.random() < 0.2:
        row["asset_severity"] = rng.choice(["A1", "A2"])
    if rng.random() < 0.4:
        row["notes"] = "Invented note: the team agreed the figures for this benchmark only."
    return row


def nodes(rng: random.Random, total: int) -> Iterator[Row]:
    """Every node, numbered from 1, with its deviations and scenarios."""
    index = 0
    for number, sizes in enumerate(deviation_sizes(total, rng), start=1):
        deviations = []
        for position, count in enumerate(sizes):
            guideword, parameter = GUIDEWORDS[position % len(GUIDEWORDS)]
            if position >= len(GUIDEWORDS):  # a big node repeats guidewords on another line
                parameter = f"{parameter} (line {position // len(GUIDEWORDS) + 1})"
            scenarios = []
            for _ in range(count):
                index += 1
                scenarios.append(scenario(rng, f"S{index:05d}", str(number)))
            deviations.append({"guideword": guideword, "parameter": parameter,
                               "scenarios": scenarios})
        yield {"number": str(number), "name": f"Bench unit {number} (invented)",
               "design_intent": "Invented section for load measurement; no real plant.",
               "deviations": deviations}


def recommendations(rng: random.Random, total: int) -> list[Row]:
    """About one action per 50 scenarios, each addressing one to three scenarios."""
    statuses = ["open", "in_progress", "done", "rejected"]
    rows = []
    for number in range(1, max(1, total // 50) + 1):
        refs = sorted({f"S{rng.randint(1, total):05d}" for _ in range(rng.randint(1, 3))})
        status = rng.choice(statuses)
        rows.append({"text": f"Invented action {number}: review the layers of these scenarios",
                     "owner": f"Invented owner {number % 7 + 1}",
                     "due_date": f"2027-{number % 12 + 1:02d}-15", "status": status,
                     "status_reason": "Invented reason" if status == "rejected" else "",
                     "scenarios": refs})
    return rows


def build_study(total: int, seed: int = DEFAULT_SEED) -> Row:
    """A whole invented study file of exactly `total` scenarios; the same seed gives the same
    file."""
    if total < 1:
        raise ValueError("a benchmark study needs at least one scenario")
    rng = random.Random(seed)
    participants = [{"ref": f"T{k}", "name": f"Invented team member {k}", "role": role}
                    for k, role in enumerate(["Facilitator", "Scribe", "Operations",
                                              "Instruments", "Process", "Maintenance"], 1)]
    days = [{"day": f"2026-{month:02d}-{day:02d}", "note": "Invented session day",
             "attendees": [p["ref"] for p in participants]}
            for month in range(1, 13) for day in (5, 12, 19)][: max(1, total // 500)]
    return {
        "format": "tallyroom-study", "schema_version": 2, "invented": True,
        "study": {"title": f"Benchmark study of {total:,} scenarios (invented, seed {seed})",
                  "facility": "Invented benchmark works (no real site)",
                  "scope": "Generated for `make bench`; every name and number is invented."},
        "severity_categories": CATEGORIES,
        "nodes": list(nodes(rng, total)),
        "recommendations": recommendations(rng, total),
        "participants": participants,
        "session_days": days,
    }


def study_text(total: int, seed: int = DEFAULT_SEED) -> str:
    """The study file as compact JSON text."""
    return json.dumps(build_study(total, seed), separators=(",", ":"), ensure_ascii=False)


def main(argv: list[str] | None = None) -> int:
    """Write one generated study file."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("scenarios", type=int)
    parser.add_argument("--seed", type=int, default=DEFAULT_SEED)
    parser.add_argument("--out", required=True)
    args = parser.parse_args(argv)
    Path(args.out).write_text(study_text(args.scenarios, args.seed), encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
