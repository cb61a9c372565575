"""The invented demo scenarios in demo_cases/: one JSON file each."""

import json
from dataclasses import dataclass
from pathlib import Path


@dataclass(frozen=True)
class DemoCase:
    slug: str
    name: str
    description: str
    inputs: dict


def load_demo_cases(folder: Path) -> list[DemoCase]:
    cases = []
    for path in sorted(Path(folder).glob("*.json")):
        data = json.loads(path.read_text(encoding="utf-8"))
        cases.append(DemoCase(path.stem, data["name"], data["description"], data["inputs"]))
    return cases
