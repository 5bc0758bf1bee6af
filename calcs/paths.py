"""Where freerun finds its stage templates and report template.

The top-level ``templates/`` folder ships inside the wheel as the package
``freerun_templates`` (see pyproject.toml), so an installed freerun and a
source checkout find the same files.
"""

from __future__ import annotations

import os
from importlib import resources
from pathlib import Path

#: Environment variable naming another templates folder (a firm's own, or a test's).
TEMPLATES_ENV = "FREERUN_TEMPLATES"

STAGES: tuple[str, ...] = ("climate", "loads", "openings", "comfort", "energy")

#: The earlier stages whose outputs each stage reads (the dependency graph of a build). A stage
#: may read only these (:meth:`calcs.stage.Stage.upstream` refuses others); its cache key holds
#: their outputs' digests; stages whose upstream stages are done run at the same time
#: (``comfort`` and ``energy`` both need only climate, loads and openings).
STAGE_UPSTREAM: dict[str, tuple[str, ...]] = {
    "climate": (),
    "loads": ("climate",),
    "openings": ("climate", "loads"),
    "comfort": ("climate", "loads", "openings"),
    "energy": ("climate", "loads", "openings"),
}

STAGE_TITLES: dict[str, str] = {
    "climate": "Climate",
    "loads": "Heat gains and loads",
    "openings": "Ventilation openings",
    "comfort": "Comfort hours",
    "energy": "Energy savings",
}


def templates_dir() -> Path:
    """Folder holding the stage notebooks, report template and print CSS."""
    if os.environ.get(TEMPLATES_ENV):
        return Path(os.environ[TEMPLATES_ENV])
    return Path(str(resources.files("freerun_templates")))


def stage_template(stage: str) -> Path:
    """Path of one stage's notebook template."""
    return templates_dir() / f"{stage}.ipynb"


def stage_dir(build_dir: str | Path, stage: str) -> Path:
    """Folder where a stage writes its outputs inside a build folder."""
    return Path(build_dir) / stage
