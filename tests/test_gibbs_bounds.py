"""Issue 18 for the Gibbs sampler: its loop is bounded and ends at the first non-finite draw."""

from __future__ import annotations

import numpy as np
import pytest
from sampling_helpers import natural_prior

from bayes.data.factor import factor_from_arrays
from bayes.engine.gibbs import MAX_SWEEPS, sample
from bayes.errors import InputError
from bayes.settings import SamplerSettings


def _factor():
    rng = np.random.default_rng(0)  # invented data
    x = rng.standard_normal((10, 1))
    return factor_from_arrays(x, x[:, 0] + rng.standard_normal(10), ["x"])


@pytest.mark.parametrize("scale", [1e-300, 1e300])
def test_draws_that_stop_being_finite_end_the_run_with_one_clear_error(scale):
    f = _factor()
    prior = natural_prior(f, {"x": ("laplace", 0.0, scale)})  # its arithmetic over/underflows
    with np.errstate(all="ignore"), pytest.raises(InputError, match="stopped being finite at"):
        sample(f, prior, SamplerSettings(chains=1, draws=50, warmup=10))


def test_a_run_longer_than_the_cap_is_refused_before_any_work():
    f = _factor()
    prior = natural_prior(f, {"x": ("laplace", 0.0, 1.0)})
    with pytest.raises(InputError, match=f"at most {MAX_SWEEPS} sweeps"):
        sample(f, prior, SamplerSettings(chains=1, draws=MAX_SWEEPS, warmup=1))
    # an ordinary prior samples as before: finite draws
    d = sample(f, prior, SamplerSettings(chains=2, draws=50, warmup=10))
    assert np.isfinite(d.gamma).all() and d.gamma.shape == (2, 50, 2)
