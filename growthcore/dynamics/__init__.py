"""What a fitted difference equation or curve implies for the long run."""

from __future__ import annotations

from growthcore.dynamics.analysis import Dynamics, analyse
from growthcore.dynamics.cobweb import Cobweb, cobweb
from growthcore.dynamics.longrun import KINDS, LongRun, classify, long_run
from growthcore.dynamics.regimes import RegimeShares, rate_parameter, regime_shares, state_scale
from growthcore.dynamics.sweep import Sweep, sweep

__all__ = ["analyse", "Dynamics", "cobweb", "Cobweb", "classify", "long_run", "LongRun", "KINDS",
           "regime_shares", "RegimeShares", "rate_parameter", "state_scale", "sweep", "Sweep"]
