"""Product-operator algebra of the transfer steps: pure math on couplings [Hz], rates [s⁻¹] and delays [s].

``steps`` holds the coherence-transfer periods (INEPT, refocused INEPT, several partners at once, carbon–carbon
transfers, multiple-quantum periods), ``evolution`` the chemical-shift evolution periods, detection and the
rate rules of decoupled and TROSY coherences, ``optimum`` the optimal delays. Everything broadcasts over
arrays of conditions. A step's delay is the total time during which its active coupling evolves.
"""

from backbone.transfer.evolution import (
    SENSITIVITY_ENHANCEMENT_GAIN,
    TROSY_COMPONENT_FRACTION,
    TrosySelection,
    constant_time_factor,
    decoupled_rate,
    detection_factor,
    real_time_factor,
    semi_constant_time_factor,
    semi_constant_time_rate,
    trosy_selection,
)
from backbone.transfer.optimum import (
    JointOptimum,
    Optimum,
    optimal_delay,
    optimal_delays,
    optimal_inept_delay,
    optimal_transfer_delay,
)
from backbone.transfer.steps import (
    Amplitudes,
    BranchAmplitudes,
    branch_transfer,
    cacb_split,
    homonuclear_transfer,
    inept,
    multiple_quantum,
    passive_factor,
    refocused_inept,
    transfer_amplitudes,
)

__all__ = [
    # steps
    "Amplitudes",
    "BranchAmplitudes",
    "passive_factor",
    "transfer_amplitudes",
    "inept",
    "refocused_inept",
    "branch_transfer",
    "homonuclear_transfer",
    "cacb_split",
    "multiple_quantum",
    # evolution
    "TROSY_COMPONENT_FRACTION",
    "SENSITIVITY_ENHANCEMENT_GAIN",
    "TrosySelection",
    "real_time_factor",
    "detection_factor",
    "constant_time_factor",
    "semi_constant_time_rate",
    "semi_constant_time_factor",
    "decoupled_rate",
    "trosy_selection",
    # optimum
    "Optimum",
    "JointOptimum",
    "optimal_inept_delay",
    "optimal_transfer_delay",
    "optimal_delay",
    "optimal_delays",
]
