"""The shared adoption formulas and the array engine's resistance method."""

from __future__ import annotations

import numpy as np
import pytest

from womlab import Scenario, run_replicates
from womlab.rules import adoption_rate, external_share, step_hazard, step_probability
from womlab.scenario import Adoption


def test_independent_chances_equal_the_exponential_step():
    # 1 - (1 - p')(1 - q')^m = 1 - exp(-lambda) with lambda = p + q m, p = -ln(1-p'), q = -ln(1-q')
    # (algebra of independent events; the rules module documents the identity).
    p1, q1 = 0.02, 0.1
    p, q = -np.log1p(-p1), -np.log1p(-q1)
    for m in range(6):
        rate = adoption_rate("count", np.array([float(m)]), np.array([6.0]), Adoption(external=p, word_of_mouth=q))
        assert step_probability(rate, 1.0, "exponential")[0] == pytest.approx(1 - (1 - p1) * (1 - q1) ** m, abs=1e-12)


def test_share_rule_isolated_organisation_feels_only_external():
    a = Adoption(rule="share", external=0.01, word_of_mouth=0.4)
    assert adoption_rate("share", np.array([0.0]), np.array([0.0]), a)[0] == pytest.approx(0.01)
    assert adoption_rate("share", np.array([2.0]), np.array([8.0]), a)[0] == pytest.approx(0.01 + 0.4 * 0.25)


def test_capped_rule_and_attribution_share():
    a = Adoption(rule="capped", external=0.01, word_of_mouth=0.02, cap=0.05)
    rate = adoption_rate("capped", np.array([1.0, 10.0]), np.array([0.0, 0.0]), a)
    assert rate == pytest.approx([0.03, 0.05])
    # attribution is proportional to the uncapped parts: p / (p + q T)
    assert external_share("capped", np.array([10.0]), np.array([0.0]), a)[0] == pytest.approx(0.01 / 0.21)


@pytest.mark.parametrize("form", ["exponential", "linear"])
def test_step_hazard_reproduces_step_probability(form):
    rate = np.array([0.0, 0.05, 0.5, 2.0])
    for dt in (1.0, 0.25):
        h = step_hazard(rate, dt, form)
        assert np.allclose(-np.expm1(-h), step_probability(rate, dt, form))


@pytest.mark.parametrize(
    "form,survival", [("exponential", lambda p, t: np.exp(-p * t)), ("linear", lambda p, t: (1 - p) ** t)]
)
def test_external_influence_alone_gives_the_textbook_waiting_time(form, survival):
    # With no word of mouth the Bass model is pure external influence: the time to adopt is
    # exponential (rate p) with the exponential step, geometric (probability p per period) with the
    # linear one (Bass 1969, q = 0). Tolerance: 4 binomial standard errors at N = 20,000.
    n, p = 20_000, 0.08
    s = Scenario.from_dict(
        {
            "seed": 3,
            "market": {"organisations": n, "initial_customers": 0},
            "network": {"kind": "random", "mean_degree": 4},
            "adoption": {"external": p, "word_of_mouth": 0.0},
            "run": {"periods": 15, "step_probability": form},
        }
    )
    share = run_replicates(s, 1).shares()[0]
    t = np.arange(16)
    expected = 1 - survival(p, t)
    se = np.sqrt(expected * (1 - expected) / n)
    assert np.all(np.abs(share - expected) <= 4 * se + 1e-12)


def _cannot_type(x):
    return x + "a string"  # numba's typing refuses int + str: a compilation failure on any machine


def test_a_failed_compilation_is_one_line_naming_numba_and_its_version():
    import numba

    from womlab.errors import CompilerError
    from womlab.rules import compiled

    with pytest.raises(CompilerError) as err:
        compiled(_cannot_type)(1)
    message = str(err.value)
    assert "\n" not in message
    assert message.startswith(f"numba {numba.__version__} could not compile womlab's _cannot_type on this machine")
    assert message.endswith("install a supported one with: pip install 'numba>=0.68,<0.69'")


def test_an_unsupported_numba_stops_the_command_with_one_line(tmp_path):
    # A numba outside the tested versions (here a stand-in module that says 0.50.0) must not run
    # the engines at all: womlab still imports, and the command fails with one line and exit 2.
    import subprocess
    import sys

    config = "sweep-demo"  # a scenario shipped in the package
    code = (
        "import sys, types; fake = types.ModuleType('numba'); fake.__version__ = '0.50.0'; "
        "sys.modules['numba'] = fake\nfrom womlab.cli import main\n"
        f"sys.exit(main(['run', {str(config)!r}, '--replicates', '1', '--jobs', '1', '--quiet', "
        f"'--out', {str(tmp_path / 'o')!r}]))"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=300)
    assert done.returncode == 2, done.stderr
    assert done.stderr.strip() == (
        "womlab: error: numba 0.50.0 is outside the versions womlab supports (>= 0.68, < 0.69); "
        "install a supported one with: pip install 'numba>=0.68,<0.69'"
    )
