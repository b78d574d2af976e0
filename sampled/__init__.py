"""sampled: stability, margins and sample-period limits of digital control loops.

The verdicts hold for the linear model given. Verify on hardware with protective limits; safety
functions follow the applicable functional-safety standard and licensed engineering practice.
"""

__version__ = "0.1.0"

#: The caution every report and command output carries.
SAFETY_CAUTION = (
    "Caution: this verdict holds for the linear model given. Verify on hardware with protective "
    "limits; safety functions follow the applicable functional-safety standard and licensed "
    "engineering practice."
)
