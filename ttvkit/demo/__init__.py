"""The invented demo scenario (the star Orvessa and its planet Orvessa b) and its end-to-end run."""

from ttvkit.demo.scenario import (
                                  PLANET_NAME,
                                  SEED,
                                  STAR_NAME,
                                  SYSTEM_TOML,
                                  TRUTH,
                                  DemoScenario,
                                  build_demo_scenario,
                                  target,
)

__all__ = ["build_demo_scenario", "DemoScenario", "TRUTH", "SEED", "STAR_NAME", "PLANET_NAME",
           "SYSTEM_TOML", "target"]
