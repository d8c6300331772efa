"""The statistics of paired reports: rank and sign tests, the censored fits of B minus A,
the decoders' detection curve, and the cluster bootstrap.
"""

from spotkit.stats.bootstrap import (
    DRAWS,
    INTERVAL_METHODS,
    bootstrap_interval,
    bootstrap_p_value,
    cluster_bootstrap_weights,
    percentile_p_value,
    stratified_bootstrap_weights,
)
from spotkit.stats.censored import (
    MIXTURE_EXACT_WEIGHT,
    SIGMA_FLOOR_DB,
    CensoredFit,
    censored_mixture_mle,
    censored_mixture_mle_batch,
    censored_normal_mle,
    censored_normal_mle_batch,
    interval_censored_mle,
    interval_censored_mle_batch,
    normal_share,
)
from spotkit.stats.detection import (
    DEFAULT_TAU_DB,
    ROUNDINGS,
    TAU_GRID_DB,
    fit_tau,
    fit_thresholds,
)
from spotkit.stats.paired import (
    TestResult,
    benjamini_hochberg,
    cluster_medians,
    hodges_lehmann,
    hodges_lehmann_ci,
    mcnemar,
    sign_test,
    wilcoxon_signed_rank,
    wilson_interval,
)
from spotkit.stats.receivers import N_NODES, receiver_effects_mle_batch
from spotkit.stats.simultaneous import max_t

__all__ = [
    "TestResult", "wilcoxon_signed_rank", "hodges_lehmann", "hodges_lehmann_ci",
    "sign_test", "mcnemar", "benjamini_hochberg", "wilson_interval", "cluster_medians",
    "SIGMA_FLOOR_DB",
    "CensoredFit", "censored_normal_mle", "censored_normal_mle_batch",
    "censored_mixture_mle", "censored_mixture_mle_batch", "normal_share",
    "interval_censored_mle", "interval_censored_mle_batch", "MIXTURE_EXACT_WEIGHT",
    "DEFAULT_TAU_DB", "ROUNDINGS", "TAU_GRID_DB", "fit_thresholds", "fit_tau",
    "INTERVAL_METHODS", "DRAWS", "cluster_bootstrap_weights",
    "stratified_bootstrap_weights", "bootstrap_interval", "bootstrap_p_value", "max_t",
    "percentile_p_value",
    "N_NODES", "receiver_effects_mle_batch",
]
