"""Measures over count arrays: odds, entropy, weight of evidence, association, ranking and drift.

Every function here works on arrays of (possibly weighted, float) counts, never on rows, so a
caller first aggregates its data (for example with ``np.bincount``) and then asks for a measure.
All logarithms are natural (nats); bits are nats divided by ``ln 2``.

Conventions
-----------
* A *good* is the non-event, a *bad* the event. The model predicts the log-odds of GOOD.
* Weight of evidence of bin ``i`` is ``ln((g_i / G) / (b_i / B))``: positive means lower risk.
* Information value is ``sum((g_i / G - b_i / B) * WoE_i)``, which is never negative.
* Higher scores mean lower risk, so score histograms are given in ascending score order.

Invalid arrays (wrong shape, unequal lengths, non-finite or negative entries, zero totals)
raise :class:`ValueError` naming the argument and the first entry at fault.

This package imports nothing else of the product: every stage may use it.
"""

from scorecard.measures.calibration import HosmerLemeshow, hosmer_lemeshow
from scorecard.measures.information import (
                                            InformationValue,
                                            MutualInformation,
                                            cramers_v,
                                            entropy,
                                            information_value,
                                            iv_strength,
                                            iv_terms,
                                            logistic,
                                            logit,
                                            mutual_information,
                                            outcome_mutual_information,
                                            shrunk_woe,
                                            weight_of_evidence,
                                            woe_of_shares,
                                            woe_standard_error,
)
from scorecard.measures.ranking import Discrimination, PairedAUC, discrimination, paired_auc
from scorecard.measures.stability import (
                                            StabilityIndex,
                                            stability_critical_value,
                                            stability_index,
                                            stability_status,
)

__all__ = [
    "Discrimination",
    "HosmerLemeshow",
    "InformationValue",
    "MutualInformation",
    "PairedAUC",
    "StabilityIndex",
    "cramers_v",
    "discrimination",
    "entropy",
    "hosmer_lemeshow",
    "information_value",
    "iv_strength",
    "iv_terms",
    "logistic",
    "logit",
    "mutual_information",
    "outcome_mutual_information",
    "paired_auc",
    "shrunk_woe",
    "stability_critical_value",
    "stability_index",
    "stability_status",
    "weight_of_evidence",
    "woe_of_shares",
    "woe_standard_error",
]
