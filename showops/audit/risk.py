"""The safety risk matrix: likelihood 1-5, severity A-E, a tolerability region per cell.

Source: ICAO Doc 9859, *Safety Management Manual*, 4th edition (2018), its safety
risk probability table, safety risk severity table and safety risk matrix with the
tolerability regions. The cell-to-region table below is **from memory** of that
edition's figure; it is checked cell by cell in ``tests/audit/test_risk.py`` against
the same recollection written out independently, not against the printed page.

The region is stored per cell as data and never computed from a product with a
threshold: 5C and 3E have the same product (15) and different regions. Every
assessment stores the matrix edition it was made with (:data:`MATRIX_EDITION`), so a
later edition of the table never silently re-grades an old record.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from showops.errors import ValidationError

#: Names the table an assessment was made with; stored beside every assessment.
MATRIX_EDITION = "ICAO Doc 9859 4th ed. (2018), from memory"

Region = Literal["intolerable", "tolerable", "acceptable"]
REGIONS: tuple[Region, ...] = ("intolerable", "tolerable", "acceptable")

#: Likelihood (ICAO Doc 9859 safety risk probability table): value -> (name, meaning).
LIKELIHOODS: dict[int, tuple[str, str]] = {
    5: ("Frequent", "likely to occur many times (has occurred frequently)"),
    4: ("Occasional", "likely to occur sometimes (has occurred infrequently)"),
    3: ("Remote", "unlikely to occur, but possible (has occurred rarely)"),
    2: ("Improbable", "very unlikely to occur (not known to have occurred)"),
    1: ("Extremely improbable", "almost inconceivable that the event will occur"),
}

#: Severity (ICAO Doc 9859 safety risk severity table): letter -> (name, meaning on a
#: stage). The names are ICAO's; the stage readings are this project's.
SEVERITIES: dict[str, tuple[str, str]] = {
    "A": ("Catastrophic", "death, or several people seriously injured; rig destroyed"),
    "B": ("Hazardous", "serious injury (a fall from the platform, a crush); a large loss of safety margin"),
    "C": ("Major", "an injury needing medical treatment; a significant loss of safety margin"),
    "D": ("Minor", "first aid only; the stop procedure used; a nuisance"),
    "E": ("Negligible", "few consequences"),
}

#: What each region asks for (ICAO Doc 9859 tolerability descriptions, paraphrased).
REGION_MEANING: dict[Region, str] = {
    "intolerable": "stop the activity or act at once to bring the risk down",
    "tolerable": "acceptable only with mitigation and a management decision on record",
    "acceptable": "acceptable as it is; no further mitigation required",
}

# ICAO Doc 9859 4th edition, safety risk tolerability (from memory): the cell lists.
_CELLS: dict[Region, tuple[str, ...]] = {
    "intolerable": ("5A", "5B", "5C", "4A", "4B", "3A"),
    "tolerable": ("5D", "5E", "4C", "4D", "4E", "3B", "3C", "3D", "2A", "2B", "2C", "1A"),
    "acceptable": ("3E", "2D", "2E", "1B", "1C", "1D", "1E"),
}

#: Every cell ("5A" ... "1E") -> its region. Data, not arithmetic.
MATRIX: dict[str, Region] = {cell: region for region, cells in _CELLS.items() for cell in cells}


@dataclass(frozen=True)
class Assessment:
    """One risk assessment of a record.

    ``severity_actual`` is what happened; ``severity_potential`` the worst credible
    outcome. A near miss is judged by its potential (ICAO Doc 9859 and HSE HSG245
    both grade an occurrence by its worst credible consequence), so :attr:`cell`
    uses the more severe of the two.
    """

    likelihood: int
    severity_actual: str
    severity_potential: str
    edition: str = MATRIX_EDITION

    @property
    def severity(self) -> str:
        """The severity the cell is read at: the more severe (earlier letter) of the two."""
        return min(self.severity_actual, self.severity_potential)

    @property
    def cell(self) -> str:
        return f"{self.likelihood}{self.severity}"

    @property
    def region(self) -> Region:
        return MATRIX[self.cell]

    def to_dict(self) -> dict:
        return {"likelihood": self.likelihood, "severity_actual": self.severity_actual,
                "severity_potential": self.severity_potential, "cell": self.cell,
                "region": self.region, "edition": self.edition}


def region_of(likelihood: int, severity: str) -> Region:
    """Return the tolerability region of a cell.

    :raises ValidationError: for a likelihood outside 1-5 or a severity outside A-E.
    """
    return MATRIX[f"{parse_likelihood(likelihood)}{parse_severity(severity)}"]


def parse_likelihood(value, field: str = "likelihood") -> int:
    """Read a likelihood (1-5, ICAO Doc 9859) from an int or a string.

    :raises ValidationError: naming the value and the scale, e.g. for 6.
    """
    text = str(value).strip()
    if isinstance(value, bool) or not text.isdigit() or int(text) not in LIKELIHOODS:
        scale = ", ".join(f"{k} {v[0]}" for k, v in LIKELIHOODS.items())
        raise ValidationError(field, f"{value!r} is not on the likelihood scale (give 1-5: {scale})")
    return int(text)


def parse_severity(value, field: str = "severity") -> str:
    """Read a severity letter (A-E, ICAO Doc 9859), any case.

    :raises ValidationError: naming the value and the scale.
    """
    text = str(value).strip().upper()
    if text not in SEVERITIES:
        scale = ", ".join(f"{k} {v[0]}" for k, v in SEVERITIES.items())
        raise ValidationError(field, f"{value!r} is not on the severity scale (give A-E: {scale})")
    return text


def assess(likelihood, severity_actual, severity_potential, *, kind: str | None = None) -> Assessment:
    """Validate and build an :class:`Assessment`.

    :param kind: the record's kind; a ``near_miss`` or ``unsafe_condition`` harmed
        nobody, so its actual severity must be E (negligible) and the potential
        carries the grade.
    :raises ValidationError: for values off the scales, a potential less severe than
        what actually happened, or an actual harm recorded on a near miss.
    """
    likelihood = parse_likelihood(likelihood)
    actual = parse_severity(severity_actual, "severity_actual")
    potential = parse_severity(severity_potential, "severity_potential")
    if potential > actual:
        raise ValidationError("severity_potential", f"{potential} is less severe than what happened ({actual}); "
                              "the worst credible outcome is at least as severe as the actual one")
    if kind in ("near_miss", "unsafe_condition") and actual != "E":
        raise ValidationError("severity_actual", f"a {kind.replace('_', ' ')} harmed nobody, so its actual "
                              f"severity is E (negligible), not {actual}; grade it by its potential, "
                              "or classify it as an incident")
    return Assessment(likelihood, actual, potential)
