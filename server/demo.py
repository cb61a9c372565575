"""The invented demo scenarios in demo_cases/: one JSON file each."""

import json
from dataclasses import dataclass
from pathlib import Path


@dataclass(frozen=True)
class DemoScenario:
    slug: str
    name: str
    description: str
    inputs: dict
    version: int = 0  # the file's modification time [ns]: a changed file is a new version


def load_demo_scenarios(folder: Path) -> list[DemoScenario]:
    demos = []
    for path in sorted(Path(folder).glob("*.json")):
        data = json.loads(path.read_text(encoding="utf-8"))
        demos.append(DemoScenario(path.stem, data["name"], data["description"], data["inputs"],
                                  path.stat().st_mtime_ns))
    return demos
