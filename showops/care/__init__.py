"""Rig care and readiness (pure: no Flask, click or sqlite).

The records a rig needs before it may carry people tonight (inspections against a
venue's rule set, the pre-show check, the briefing, rehearsal currency, the area
release, safety objections and the equipment register) and the rules that turn them
into :class:`showops.verdict.Reason` lines. ``showops.store.care`` reads and writes
the records; ``showops.store.care.readiness_reasons`` is what a cue's verdict calls.
"""

from showops.care.rules import cue_readiness, CueReadiness
from showops.care.schedules import DEFAULT_RULE_SET, DEFAULT_RULE_SETS, add_months

__all__ = ["CueReadiness", "DEFAULT_RULE_SET", "DEFAULT_RULE_SETS", "add_months", "cue_readiness"]
