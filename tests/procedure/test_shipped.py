"""The procedures that ship pass the checker for their rigs (issue 3, "done when")."""

from __future__ import annotations

import pytest

from showops.procedure import check_procedure, load_procedure, render_procedure_html
from showops.rig import load_rig, solve_rig

from .conftest import REPO

SHIPPED = sorted((REPO / "procedures").glob("*.md"))
# Tonight's riders for the demo (invented): the casts each demo rig carries.
RIDERS_BY_RIG = {
    "orchard-lift": [(48,), (58, 64), (66, 62)],
    "bough-lever": [(49,), (52,), (55,)],
}
CASES = [(path, riders) for path in SHIPPED for riders in RIDERS_BY_RIG.get(path.stem, [(55,)])]


def _rig_file(proc):
    return REPO / "procedures" / "rigs" / f"{proc.rig}.toml"


def test_procedures_ship_for_both_demo_rigs():
    assert {"orchard-lift.md", "bough-lever.md"} <= {p.name for p in SHIPPED}


@pytest.mark.parametrize("path, riders", CASES, ids=[f"{p.stem}-{'+'.join(map(str, r))}" for p, r in CASES])
def test_shipped_procedure_is_clean_for_its_rig(path, riders):
    proc = load_procedure(path)
    rig_path = _rig_file(proc)
    if not rig_path.exists():
        pytest.fail(f"{path.name} names rig {proc.rig!r} but {rig_path} does not exist")
    result = solve_rig(load_rig(rig_path), list(riders))
    if result.verdict == "blocked":
        pytest.fail(f"demo riders {riders} are blocked on {proc.rig}: pick riders the demo rig carries")
    assert result.empty_operator_force_n < 0  # both demo rigs: the empty platform rises by itself
    findings = check_procedure(proc, rig_result=result, rig_slug=rig_path.stem)
    assert findings == [], "\n".join(f.format(path.name) for f in findings)


@pytest.mark.parametrize("path", SHIPPED, ids=[p.stem for p in SHIPPED])
def test_shipped_procedure_is_clean_with_a_performance_context(path):
    """The night's context as the show area builds it: plain lists, no `load` key, a role
    nobody is cast in; `load` comes from the rig result and every role is bound."""
    proc = load_procedure(path)
    result = solve_rig(load_rig(_rig_file(proc)), [RIDERS_BY_RIG[path.stem][0][0]])
    context = {"riders": ["Wren Halloway"], "crew": {"brake": ["Nell Tregarthen"], "lifters": ["A", "B"]},
               "performance": {"id": 1, "starts_at": "2026-12-05T19:30"}, "cue": {"number": "6", "name": "Bough call"}}
    assert check_procedure(proc, rig_result=result, context=context) == []
    page = render_procedure_html(proc, dict(context, load=result.to_dict()))
    assert "Nell Tregarthen" in page and "A, B" in page and "[nobody cast as caller]" in page
    assert "not bound" not in page and "refused" not in page


@pytest.mark.parametrize("path", SHIPPED, ids=[p.stem for p in SHIPPED])
def test_shipped_procedure_has_a_signal_a_stop_phase_and_reasons(path):
    proc = load_procedure(path)
    assert proc.signal and proc.stop_phases
    titles = [p.title.lower() for p in proc.phases]
    assert len(titles) == 8  # board, brake release, lift, hold, lower, brake on, disembark, stop
    for step in proc.main_steps + proc.stop_steps:
        if any(s.split()[0] in ("brake", "platform", "rider", "strap") for s in step.sets):
            assert step.why, step.title
