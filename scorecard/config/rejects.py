"""The ``rejects`` section: declined applications and how their outcomes are inferred.

Each setting has its default here, once, with the reason for it; the reader in
:mod:`scorecard.config.loading` checks the YAML against :data:`REJECT_SETTINGS`.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from scorecard.config.sources import DatabaseQuery

REJECT_METHODS = ("fuzzy", "parcelling", "hard_cutoff", "reweighting", "none")

# Settings only one method reads; given for another method they are an error, so that a
# modeller who switches method is told that a setting no longer applies. ``bands`` serves every
# method (the workbook's table of accepts and rejects by score band).
METHOD_SETTINGS = {
    "fuzzy": (),
    "parcelling": ("uplift", "seed"),
    "hard_cutoff": ("cutoff", "reject_bad_rate"),
    "reweighting": (),
    "none": (),
}

# Default and reason of every method setting (the reasons are repeated in the workbook).
REJECT_SETTINGS = {
    "bands": (10, "Ten score bands of the through-the-door population keep about a tenth of the "
                  "applicants in each: enough accepts per band for a stable bad rate, fine enough "
                  "to follow the score."),
    "uplift": (1.5, "Declined applicants in a score band were declined partly on information the "
                    "card does not hold, which in practice makes them worse than the accepts of "
                    "the same band; 1.5 is a moderate factor within the range practitioners use "
                    "(common practice, from memory). Set 1 to assume the old policy saw nothing "
                    "the card does not."),
    "seed": (None, "None takes samples.seed, so one seed fixes every random draw of a build."),
    "cutoff": (None, "None: the cut-off is the score that gives reject_bad_rate."),
    "reject_bad_rate": (None, "None: the bad rate the accepts-only card expects among the rejects "
                              "(the mean of their probabilities of bad), so a hard cut-off infers "
                              "as many bads as the card expects and only decides which."),
}


@dataclass(frozen=True, slots=True)
class RejectsConfig:
    """Declined applications (no outcome) and the reject inference method.

    Attributes
    ----------
    source : Path or DatabaseQuery
        File of declined applications with the same characteristics as ``data.source`` and no
        outcome; any format ``data.source`` reads (a database query too); a file is resolved
        against the config's folder.
    method : str
        ``fuzzy`` (fuzzy augmentation), ``parcelling``, ``hard_cutoff``, ``reweighting`` or
        ``none`` (the accepts-only card; the rejects are still scored and reported).
    bands : int
        Score bands of the accepts-only card: parcelling and reweighting work by band, and the
        workbook shows accepts and rejects by band for every method.
    uplift : float
        Parcelling: the rejects' bad rate in a band is the accepts' bad rate there times this.
    seed : int or None
        Parcelling: seed of the draws of outcomes; None takes ``samples.seed``.
    cutoff : float or None
        Hard cut-off: rejects scoring below this count as bad, the rest as good.
    reject_bad_rate : float or None
        Hard cut-off without ``cutoff``: the lowest-scoring rejects count as bad up to this share.
    encoding, delimiter : str
        Text encoding and field separator when the rejects file is CSV; each file states its
        own, so they do not follow ``data``.
    known_outcome : str or None
        A column of the rejects file holding the outcome they later had elsewhere (such as on
        credit bureau data) or, for invented data, their true outcome; coded like ``data.target``.
        Used only to check the inference in the workbook, never to build.
    """

    source: Path | DatabaseQuery
    method: str = "fuzzy"
    bands: int = REJECT_SETTINGS["bands"][0]
    uplift: float = REJECT_SETTINGS["uplift"][0]
    seed: int | None = REJECT_SETTINGS["seed"][0]
    cutoff: float | None = REJECT_SETTINGS["cutoff"][0]
    reject_bad_rate: float | None = REJECT_SETTINGS["reject_bad_rate"][0]
    known_outcome: str | None = None
    encoding: str = "utf-8"
    delimiter: str = ","

    def settings(self) -> dict:
        """The settings the method reads, by name (defaults included)."""
        return {name: getattr(self, name) for name in ("bands",) + METHOD_SETTINGS[self.method]}
