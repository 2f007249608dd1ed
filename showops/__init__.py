"""showops: operating procedures, load checks, crew sheets and a tamper-evident
show log for hand-worked stage machinery that carries performers."""

__version__ = "0.1.0"

#: The caution shown wherever showops shows a computed force, a verdict or a procedure.
CAUTION = (
    "These figures and checks help a competent person; they do not replace the rig's "
    "design review by a qualified engineer, its inspection, the venue's risk assessment, "
    "or the local codes and licensed practice that apply. Anything that carries people "
    "must be signed off by a qualified engineer under local rules."
)
