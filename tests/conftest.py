"""Shared test configuration.

* ``tests/`` on ``sys.path``: pytest runs with ``--import-mode=importlib`` (pyproject.toml), which
  does not add test folders to the path; the helper module ``network_generator`` lives here.
* Hypothesis settings profiles for the property-based network tests:
  ``default`` (150 examples per property: about a minute for the property file on one core) and ``thorough``
  (2000 per property). Choose one with ``--hypothesis-profile=thorough`` or the environment
  variable ``HXTRAIN_HYPOTHESIS_PROFILE=thorough`` (the command-line option wins).
* A terminal summary line with the number of generated networks the property tests checked.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

from hypothesis import HealthCheck, settings

_TESTS = str(Path(__file__).resolve().parent)
if _TESTS not in sys.path:
    sys.path.insert(0, _TESTS)

_COMMON = dict(deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
               print_blob=True)
settings.register_profile("default", max_examples=150, **_COMMON)
settings.register_profile("thorough", max_examples=2000, **_COMMON)
settings.load_profile(os.environ.get("HXTRAIN_HYPOTHESIS_PROFILE", "default"))


def pytest_terminal_summary(terminalreporter):
    generator = sys.modules.get("network_generator")
    if generator is None or not generator.STATS["networks"]:
        return
    stats = generator.STATS
    counts = stats["networks"]
    terminalreporter.write_sep("-", "generated networks checked")
    for name, count in counts.items():
        terminalreporter.write_line(f"{name}: {count}")
    terminalreporter.write_line(f"total: {sum(counts.values())} generated networks "
                                f"(hypothesis profile {settings.get_current_profile_name()!r})")
    terminalreporter.write_line("networks with each feature: " + ", ".join(
        f"{name} {count}" for name, count in sorted(stats["features"].items())))
    terminalreporter.write_line(f"largest network: {stats['max_units']} units; slowest convergence: "
                                f"{stats['max_iterations']} iterations ({stats['max_iterations_case']})")
