"""The risk matrix against ICAO Doc 9859, Safety Management Manual, 4th edition (2018).

The expected regions below are written out row by row from memory of that edition's
safety risk tolerability figure (rows are likelihood 5..1, columns severity A..E),
independently of the cell lists in showops/audit/risk.py. Scale names are ICAO's
(probability table: Frequent .. Extremely improbable; severity table: Catastrophic
.. Negligible).
"""

from __future__ import annotations

import pytest

from showops.audit import risk
from showops.errors import ValidationError

# ICAO Doc 9859 4th ed., tolerability, from memory. I = intolerable, T = tolerable, A = acceptable.
PUBLISHED = {
    5: "IIITT",   # 5A 5B 5C intolerable; 5D 5E tolerable
    4: "IITTT",   # 4A 4B intolerable; 4C 4D 4E tolerable
    3: "ITTTA",   # 3A intolerable; 3B 3C 3D tolerable; 3E acceptable
    2: "TTTAA",   # 2A 2B 2C tolerable; 2D 2E acceptable
    1: "TAAAA",   # 1A tolerable; 1B..1E acceptable
}
LETTER = {"I": "intolerable", "T": "tolerable", "A": "acceptable"}
CELLS = [(lik, sev, LETTER[code]) for lik, row in PUBLISHED.items() for sev, code in zip("ABCDE", row)]


@pytest.mark.parametrize("likelihood,severity,region", CELLS)
def test_every_cell_matches_the_published_matrix(likelihood, severity, region):
    assert risk.region_of(likelihood, severity) == region
    assert risk.MATRIX[f"{likelihood}{severity}"] == region


def test_the_matrix_has_exactly_25_cells():
    assert sorted(risk.MATRIX) == sorted(f"{l}{s}" for l in range(1, 6) for s in "ABCDE")


def test_equal_products_are_not_equal_regions():
    # 5C and 3E: likelihood x severity rank 5x3 = 3x5 = 15, regions differ (ICAO Doc 9859).
    assert risk.region_of(5, "C") == "intolerable"
    assert risk.region_of(3, "E") == "acceptable"


@pytest.mark.parametrize("value,name", [(5, "Frequent"), (4, "Occasional"), (3, "Remote"), (2, "Improbable"),
                                        (1, "Extremely improbable")])
def test_likelihood_names_are_icao_names(value, name):
    assert risk.LIKELIHOODS[value][0] == name


@pytest.mark.parametrize("letter,name", [("A", "Catastrophic"), ("B", "Hazardous"), ("C", "Major"),
                                         ("D", "Minor"), ("E", "Negligible")])
def test_severity_names_are_icao_names(letter, name):
    assert risk.SEVERITIES[letter][0] == name


@pytest.mark.parametrize("bad", [6, 0, -1, "6", "x", "", 2.5, True, None])
def test_likelihood_off_the_scale_is_refused(bad):
    with pytest.raises(ValidationError, match="likelihood"):
        risk.parse_likelihood(bad)


@pytest.mark.parametrize("bad", ["F", "", "AB", 1, None])
def test_severity_off_the_scale_is_refused(bad):
    with pytest.raises(ValidationError, match="severity"):
        risk.parse_severity(bad)


def test_near_miss_is_judged_by_its_worst_credible_outcome():
    a = risk.assess(3, "E", "B", kind="near_miss")
    assert a.cell == "3B" and a.region == "tolerable"
    assert a.edition == risk.MATRIX_EDITION
    assert a.to_dict()["region"] == "tolerable"


def test_near_miss_with_actual_harm_is_refused():
    with pytest.raises(ValidationError, match="severity_actual"):
        risk.assess(3, "C", "B", kind="near_miss")


def test_potential_less_severe_than_actual_is_refused():
    with pytest.raises(ValidationError, match="severity_potential"):
        risk.assess(2, "C", "D", kind="incident")


def test_incident_uses_the_more_severe_of_actual_and_potential():
    assert risk.assess(4, "C", "B", kind="incident").cell == "4B"
    assert risk.assess(4, "C", "C", kind="incident").region == "tolerable"
