"""Answers that are not a position on the scale ("don't know", "no answer", ...).

Survey exports often keep such answers as the last level of an ordered scale; counted as its
top they distort every ordinal measure. Tables flag them (:attr:`OrdinalTable.non_substantive`)
and the ``note`` column of the measures names them; nothing is excluded automatically.
"""

from __future__ import annotations

from collections.abc import Hashable, Iterable, Sequence

__all__ = ["NON_SUBSTANTIVE_PHRASES", "normalised", "flagged_labels", "off_scale_note"]

#: Common phrasings of answers that are not a position on an ordered scale (common practice
#: in questionnaire design and survey data cleaning; compared case-insensitively, with straight
#: and curly apostrophes alike and runs of spaces read as one).
NON_SUBSTANTIVE_PHRASES = frozenset({
    "don't know", "dont know", "do not know", "dk", "not sure", "can't say", "cannot say",
    "no answer", "no response", "not answered", "refused", "refusal", "declined",
    "prefer not to say", "prefer not to answer", "rather not say", "no opinion",
    "not applicable", "n/a", "na", "dk/na", "missing", "(missing)",
})


def normalised(label: Hashable) -> str:
    """The form labels are compared in: text, lower case (casefold), one space between words,
    straight apostrophes."""
    return " ".join(str(label).replace("\u2019", "'").casefold().split())


def flagged_labels(
    labels: Sequence[Hashable],
    members: dict[Hashable, tuple],
    extra: Iterable[Hashable] | None,
) -> list:
    """The labels that are, or cover, a non-substantive answer.

    Parameters
    ----------
    labels : sequence
        Current categories of one variable.
    members : dict
        Current label -> labels as counted that it covers (a merged category is flagged when
        any of its members is).
    extra : iterable or None
        More labels to treat as non-substantive; None turns the check off.

    Returns
    -------
    list
        The flagged labels, in the variable's order.
    """
    if extra is None:
        return []
    phrases = NON_SUBSTANTIVE_PHRASES | {normalised(x) for x in extra}
    return [label for label in labels
            if any(normalised(x) in phrases for x in (label, *members.get(label, ())))]


def off_scale_note(flagged: dict[str, Sequence[Hashable]]) -> str:
    """The measures' note naming categories that look like answers off the scale.

    Parameters
    ----------
    flagged : dict
        Variable name -> its flagged labels (see :func:`flagged_labels`).

    Returns
    -------
    str
        '' when nothing is flagged.
    """
    named = [f"{name!r}: {', '.join(map(str, labels))}" for name, labels in flagged.items()
             if labels]
    if not named:
        return ""
    return ("counts answers that look off the scale as positions on it ("
            + "; ".join(named) + "); leave them out with exclude() unless they belong there")
