"""The cautions every output of the product carries, in one place so they never drift apart."""

CAUTION = ("A scorecard is a statistical aid to credit decisions, not a decision maker. Its use "
           "must follow the credit and anti-discrimination (fair-lending) law where it is used "
           "and the lender's model-risk and compliance policy, and it needs review by qualified "
           "people before it decides anything about anyone.")

SCREEN = "This check is a screen, not a legal opinion."
