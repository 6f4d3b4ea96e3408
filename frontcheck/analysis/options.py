"""Options of the analysis of a stage (``frontcheck.analysis.tolerance`` re-exports them)."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Options"]


@dataclass
class Options:
    """Analysis options.

    mc_samples : Monte Carlo sample count (0 = no Monte Carlo).
    seed : random seed (results are reproducible).
    distribution : 'gaussian' (tolerance = 3 sigma, not truncated) or 'uniform' (over +-tol).
    percentile : low-tail percentile (percent) reported as the statistical CMRR; the gain's
        p_low/p_high are this percentile and its mirror.
    ad_convention : 'nominal' or 'corner' (frontcheck.analysis.tolerance, 'CMRR convention').
    method : 'auto' (statistics from first-order sensitivities where their error estimate is
        within ``lin_db_tol`` dB and ``lin_gain_tol`` of the gain, else ``mc_samples`` circuit
        solves; frontcheck.analysis.sensitivity) or 'monte-carlo' (always ``mc_samples``
        circuit solves, plain percentiles: what ``--samples N`` asks for).
    check_samples : draws solved exactly to estimate the first-order model's error.
    lin_samples : draws of the linear model where its distribution has no closed form.
    max_bits : largest number of tolerance variables enumerated exhaustively.
    joint_bits : largest number of resistor variables plus op-amps for which the op-amps'
        CMRR signs are enumerated jointly with the resistor corners; above it each op-amp's
        CMRR is added to the resistor corners in magnitude (the worst-sign sum of
        Pallas-Areny & Webster 1991), which costs 2^k instead of 2^(k + n) solves.
    """

    mc_samples: int = 20000
    seed: int = 1
    distribution: str = "gaussian"
    percentile: float = 0.135
    ad_convention: str = "nominal"
    max_bits: int = 14
    joint_bits: int = 12
    keep_samples: int = 2000
    method: str = "auto"
    check_samples: int = 256
    lin_db_tol: float = 0.1
    lin_gain_tol: float = 1e-4
    lin_samples: int = 200_000
