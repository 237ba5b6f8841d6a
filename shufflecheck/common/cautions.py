"""The cautions the tool shows wherever money may be at stake, written once.

Every command's terminal output ends with :func:`caution` for its subject; every report
shows :data:`REPORT_CAUTIONS` before its own. The wording defers to the local gaming
regulator and to accredited test laboratories: the tool gives statistical evidence, never
a certification.
"""

from __future__ import annotations

__all__ = ["CAUTION", "LOGS_UNTOUCHED", "REPORT_CAUTIONS", "caution"]


def caution(subject: str = "these results") -> str:
    """The one-sentence caution, about ``subject`` (e.g. ``"these recorded decks"``)."""
    return (
        f"Statistical evidence about {subject}, not a certification: shuffling devices and "
        "dealing rules are for the local gaming regulator and accredited test laboratories "
        "to approve."
    )


#: The caution with its general subject.
CAUTION = caution()

#: Said after every audit of recorded logs.
LOGS_UNTOUCHED = "The log was only read, never changed."

#: Shown in every report, in this order; a report can add its own cautions after these.
REPORT_CAUTIONS: tuple[str, ...] = (
    "These results are statistical evidence about a shuffling procedure or about a sample of "
    "recorded decks. They are not a certification of any procedure, device or game.",
    "Approval of shuffling devices and of dealing rules belongs to the local gaming regulator "
    "and to accredited test laboratories; this report defers to them.",
    "Numbers labelled 'estimate' come from random simulation or from a finite sample and carry "
    "their uncertainty; numbers labelled 'conjectured' rest on an unproven statement; only "
    "numbers labelled 'exact' or 'bound' are guarantees.",
    "The tool only reads its input files: it never alters, moves or deletes recorded logs.",
)
