"""Run settings: what the command line and the configuration file decide for a run."""

from __future__ import annotations

from dataclasses import dataclass

from .context.model import Layout, StepOptions, Summation

DEFAULT_SEED = 20261201
DEFAULT_TRIALS = 6
DEFAULT_TIMEOUT = 10.0


@dataclass(frozen=True, slots=True)
class Settings:
    """Settings of one run; every field has the documented default."""

    seed: int = DEFAULT_SEED
    """Seed of every random draw; printed in every report."""
    trials: int = DEFAULT_TRIALS
    """Random draws per size assignment."""
    timeout: float = DEFAULT_TIMEOUT
    """Seconds per step before it is a ``timeout``."""
    layout: Layout = Layout.NUMERATOR
    """Derivative layout before any ``layout`` directive."""
    up_down: bool = False
    """Index mode before any ``indices`` directive."""
    summation: Summation = Summation.EINSTEIN
    """Summation before any ``summation`` directive."""
    strict: bool = False
    """Count parse-error, unsupported and timeout as failures."""
    jobs: int = 1
    """Worker processes for deciding steps."""
    cache: bool = True
    """Reuse decided steps from the cache folder (runs on files only; never for text)."""
    cache_dir: str = ".stepcheck-cache"
    """The cache folder, relative to the working directory unless absolute."""

    def initial_options(self) -> StepOptions:
        """The step options in force at the top of every file."""
        return StepOptions(layout=self.layout, up_down=self.up_down, summation=self.summation)
