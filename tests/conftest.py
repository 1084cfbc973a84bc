"""Settings shared by the whole suite.

The property tests (Hypothesis) run under the ``repeatable`` profile: examples drawn from a seed fixed per test,
so that every run of the suite, on CI or here, tries the same examples and its verdict does not depend on
luck, and no explain phase (it re-runs a failing example under a line tracer, which on Python 3.11 can take
longer than the whole suite; the failure and its shrunk example are reported without it).
``python -m pytest --hypothesis-profile=explore`` draws new examples at every run and explains failures, to look
for new ones; a failure found that way is fixed and its example kept as an ordinary test.
"""

from hypothesis import Phase, settings

settings.register_profile("repeatable", derandomize=True,
                          phases=[Phase.explicit, Phase.reuse, Phase.generate, Phase.target, Phase.shrink])
settings.register_profile("explore", derandomize=False)
settings.load_profile("repeatable")
