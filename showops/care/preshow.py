"""The pre-show check: a short list written in the procedure file format.

Each step of the main phases of the checklist file is one item: ``by`` is the role
that answers it, ``check`` the role that checks the answer, ``reply`` what should be
seen and ``note`` how to look. An item whose step moves the platform (``sets:
platform up`` or ``platform down``) is the load trial in motion, and a checklist
without one is refused: a check before each use includes a trial in motion (DGUV
Grundsatz 315-390, from memory; LOLER 1998 reg 9(3)(b) inspections between thorough
examinations, from memory).

An answer states what was observed ("brake holds with 40 kg on the rear bar"), never
"OK": published checklist guidance asks that a response state the observed condition
(Degani and Wiener, NASA CR-177549, 1990, on flight-deck checklists).
"""

from __future__ import annotations

import re
import unicodedata

from showops.care.model import ChecklistItem
from showops.errors import ValidationError

#: Words that say nothing about what was seen. An answer made only of these is refused.
EMPTY_WORDS = frozenset("""
ok okay k yes y yep yeah no n checked check done fine good all sound alright right set ready
complete completed correct pass passed as normal usual same tick ticked confirmed confirm
na n/a a an the is none nothing x v seen noted sorted go green ✓ ✔ + - looks look it is was
""".split())

_MASS = re.compile(r"\d+(?:[.,]\d+)?\s*(?:kg|kilo|kilos|kilograms?|lb|lbs)\b", re.IGNORECASE)


def checklist_items(procedure) -> tuple[ChecklistItem, ...]:
    """Return the items of a parsed checklist (a :class:`showops.procedure.model.Procedure`).

    :raises ValidationError: (field ``checklist``) when it has no items or no load
        trial in motion.
    """
    items = []
    for step in procedure.main_steps:
        moves = any(s.strip().lower() in ("platform up", "platform down") for s in step.sets)
        items.append(ChecklistItem(key=step.key, title=step.title, role=step.by, checker=step.check,
                                   expect=step.reply, note=step.note, load_trial=moves, line=step.line))
    if not items:
        raise ValidationError("checklist", f"{procedure.source}: no items (each ### heading is one item)")
    if not any(i.load_trial for i in items):
        raise ValidationError("checklist", f"{procedure.source}: no load trial in motion (an item whose "
                                           "step sets 'platform up' with the test load aboard)")
    return tuple(items)


def _words(text: str) -> list[str]:
    text = unicodedata.normalize("NFKC", text).casefold()
    return [w for w in re.split(r"[\s,.;:!?()\"'“”‘’/]+", text) if w]


def validate_observation(text: str | None, item: ChecklistItem | None = None) -> str:
    """Return the observation stripped, or refuse one that does not say what was seen.

    :raises ValidationError: (field ``observation``) for an empty answer, an answer of
        only words like "OK", "checked" or "done", or a load trial that names no mass.
    """
    cleaned = (text or "").strip()
    if not cleaned:
        raise ValidationError("observation", "write what you observed (e.g. 'brake holds with 40 kg on "
                                             "the rear bar')")
    words = _words(cleaned)
    if all(w in EMPTY_WORDS for w in words):
        raise ValidationError("observation", f"{cleaned!r} does not say what you observed; write what you saw "
                                             "(e.g. 'strap webbing intact, stitching whole, buckle locks')")
    if len(words) < 2:
        raise ValidationError("observation", f"{cleaned!r} is too short to say what you observed; name the "
                                             "part and its state")
    if item is not None and item.load_trial and not _MASS.search(cleaned):
        raise ValidationError("observation", f"{item.title!r} is the load trial: say what test load was aboard "
                                             "and what the rig did (e.g. '80 kg sandbags, rose and lowered "
                                             "smoothly, brake held at top')")
    return cleaned
