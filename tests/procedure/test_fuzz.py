"""Property-based tests (hypothesis): thousands of generated procedures never crash the
parser, the checker or the renderer; whatever is readable parses, and every finding
points at a line of the file. Derandomised so CI runs the same examples each time."""

from __future__ import annotations

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from showops.errors import ProcedureFileError
from showops.procedure import STATE_VALUES, STEP_FIELDS, check_procedure, parse_procedure, render_procedure_html
from showops.procedure.render import render_context

from .conftest import linkage_rig_text, solve_text

ROLES = ["caller", "spotter", "brake", "lifters", "rider", "nobody", "brake, spotter", ""]
STATES = [f"{k} {v}" for k, vs in STATE_VALUES.items() for v in vs] + ["brake of", "platform", "load ok", "", "x y z"]
WORDS = ["OK", "Brake on", "done", "checked", "Platform down", "{{ crew.brake }}", "{{ load.verdict }}",
         "{{ ''.__class__ }}", "{{ nope }}", "{{", "}}", "{% if %}", "<script>x</script>", "", "é ✓ 中", "90", "-1"]

_state_list = st.lists(st.sampled_from(STATES), max_size=4).map(", ".join)
_field = st.one_of(
    st.tuples(st.sampled_from(["by", "go", "check"]), st.sampled_from(ROLES)),
    st.tuples(st.sampled_from(["needs", "sets"]), _state_list),
    st.tuples(st.sampled_from(["say", "reply", "why", "note", "caution", "hold", "phase", "bogus"]),
              st.sampled_from(WORDS)),
    st.tuples(st.sampled_from(STEP_FIELDS), st.text(max_size=20)),
).map(lambda kv: f"- {kv[0]}: {kv[1]}")
_line = st.one_of(
    _field,
    _field,
    _field,
    st.sampled_from(["## Board", "## Ride", "## Stop", "- phase: stop", "### Release brake", "### Raise",
                     "### Raise", "###", "##", "#", "# Title", "", "", "```", "  continued", "- plain bullet",
                     "Start: brake off", "Signal: arms crossed", "Roles: brake, spotter, rider",
                     "#### deep", "\t- by: brake", "* sets: brake off", "+ needs: load ok"]),
    st.text(max_size=30),
)
_procedure = st.lists(_line, min_size=1, max_size=60).map("\n".join)
_header = st.sampled_from(["", "Title: t\nRig: test-lift\nRoles: caller, spotter, brake, lifters, rider\n"
                               "Signal: arms crossed\n\n", "Rig: x\n"])

RISING = solve_text(linkage_rig_text(counterweight_kg=60))
STAYING = solve_text(linkage_rig_text(counterweight_kg=0))
CONTEXT = render_context(load=RISING.to_dict(), riders=["A"], crew={"brake": ["Jo"]})


def _check_everything(text: str, *, render: bool = False) -> None:
    try:
        proc = parse_procedure(text, source="gen.md")
    except ProcedureFileError as exc:
        assert str(exc).startswith("gen.md: ")
        return
    line_count = len(text.splitlines()) + 1
    for rig_result in (None, RISING, STAYING):
        for finding in check_procedure(proc, rig_result=rig_result):
            assert 1 <= finding.line <= line_count
            assert finding.format("gen.md").startswith(f"gen.md:{finding.line}: ")
    if render:
        check_procedure(proc, context=CONTEXT)
        page = render_procedure_html(proc, CONTEXT)
        assert "<script" not in page.lower()


@settings(max_examples=1500, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(_header, _procedure)
def test_generated_procedures_never_crash_the_parser_or_checker(header, body):
    _check_everything(header + body)


@settings(max_examples=300, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(_header, _procedure)
def test_generated_procedures_render_safely(header, body):
    _check_everything(header + body, render=True)


@settings(max_examples=700, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(st.text(max_size=400))
def test_arbitrary_text_never_crashes(text):
    _check_everything(text)
