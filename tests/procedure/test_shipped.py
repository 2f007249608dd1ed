"""The procedures that ship pass the checker for their rigs (issue 3, "done when")."""

from __future__ import annotations

import pytest

from showops.procedure import check_procedure, load_procedure
from showops.rig import load_rig, solve_rig

from .conftest import REPO

SHIPPED = sorted((REPO / "procedures").glob("*.md"))
# Tonight's riders for the demo (invented): one light rider, two, two near the limit.
RIDER_SETS = [(48,), (58, 64), (66, 62)]


def _rig_file(proc):
    return REPO / "procedures" / "rigs" / f"{proc.rig}.toml"


def test_procedures_ship():
    assert "orchard-lift.md" in {p.name for p in SHIPPED}


@pytest.mark.parametrize("path", SHIPPED, ids=[p.stem for p in SHIPPED])
@pytest.mark.parametrize("riders", RIDER_SETS, ids=lambda r: "+".join(map(str, r)) or "empty")
def test_shipped_procedure_is_clean_for_its_rig(path, riders):
    proc = load_procedure(path)
    rig_path = _rig_file(proc)
    if not rig_path.exists():
        pytest.fail(f"{path.name} names rig {proc.rig!r} but {rig_path} does not exist")
    result = solve_rig(load_rig(rig_path), list(riders))
    if result.verdict == "blocked":
        pytest.fail(f"demo riders {riders} are blocked on {proc.rig}: pick riders the demo rig carries")
    findings = check_procedure(proc, rig_result=result, rig_slug=rig_path.stem)
    assert findings == [], "\n".join(f.format(path.name) for f in findings)


@pytest.mark.parametrize("path", SHIPPED, ids=[p.stem for p in SHIPPED])
def test_shipped_procedure_has_every_phase_and_a_reason_on_critical_steps(path):
    proc = load_procedure(path)
    assert proc.signal and proc.stop_phases
    for step in proc.main_steps + proc.stop_steps:
        if any(s.split()[0] in ("brake", "platform", "rider", "strap") for s in step.sets):
            assert step.why, step.title
