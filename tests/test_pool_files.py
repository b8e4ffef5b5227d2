"""`elicit pool A.toml B.toml --out P.toml`: separately interviewed experts' files merged."""

import textwrap

import numpy as np
import pytest
from click.testing import CliRunner
from scipy import stats

from elicit.cli import main
from elicit.errors import InputError
from elicit.noise_record import pool_noise
from elicit.read import read_prior_file
from elicit.spec import NoisePrior

# Invented experts and numbers for the tests.
STUDY = '[study]\nresponse = "strength"\nresponse_units = "MPa"\n[units]\nfly_ash = "kg/m3"\n'
A = STUDY + textwrap.dedent(
    """
    [noise]
    low = 2.0
    high = 6.0
    mass = 0.9
    expert = "agronomist A"
    rationale = "repeat cylinders scatter by a few MPa"

    [[coefficient]]
    name = "fly_ash"
    low = -0.2
    high = 0.0
    mass = 0.9
    expert = "agronomist A"
    rationale = "fly ash slows early strength"

    [[coefficient]]
    name = "water"
    low = -0.5
    high = -0.1
    mass = 0.9
    expert = "agronomist A"
    """
)
B = STUDY + textwrap.dedent(
    """
    [noise]
    low = 3.0
    high = 9.0
    mass = 0.9
    expert = "engineer B"

    [[coefficient]]
    name = "fly_ash"
    family = "laplace"
    low = -0.1
    high = 0.1
    mass = 0.8
    expert = "engineer B"
    rationale = "no effect at 28 days"
    """
)


@pytest.fixture
def files(tmp_path):
    (tmp_path / "A.toml").write_text(A)
    (tmp_path / "B.toml").write_text(B)
    return tmp_path


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def test_two_files_pooled_with_a_family_per_coefficient(files):
    out = files / "pooled.toml"
    result = run("pool", files / "A.toml", files / "B.toml", "--out", out,
                 "--family", "fly_ash=mixture", "--weight", "agronomist A=2")  # fmt: skip
    assert result.exit_code == 0, result.output
    pooled = read_prior_file(out)
    fly = pooled.get("fly_ash")
    assert fly.family == "mixture"
    assert [(s.expert, s.rationale) for s in fly.statements] == [
        ("agronomist A", "fly ash slows early strength"),
        ("engineer B", "no effect at 28 days"),
    ]
    # the weight 2 of agronomist A against 1: components weigh 2/3 and 1/3
    assert [p.weight for p in fly.components] == pytest.approx([2 / 3, 1 / 3], rel=1e-12)
    assert pooled.get("water").statements[0].expert == "agronomist A"
    assert pooled.response == "strength" and pooled.units == {"fly_ash": "kg/m3"}
    noise = pooled.noise
    assert noise.pool == "linear"
    assert [(s.expert, s.rationale) for s in noise.statements] == [
        ("agronomist A", "repeat cylinders scatter by a few MPa"),
        ("engineer B", None),
    ]
    text = out.read_text()
    assert "[pool]" in text and '"agronomist A" = 2.0' in text
    # pooling the output again changes nothing but the header naming its sources
    again = files / "again.toml"
    assert run("pool", out, "--out", again).exit_code == 0
    assert again.read_text().splitlines()[1:] == text.splitlines()[1:]


def test_differing_families_need_a_choice(files):
    out = files / "pooled.toml"
    result = run("pool", files / "A.toml", files / "B.toml", "--out", out)
    assert result.exit_code == 2 and not out.exists()
    assert "fly_ash" in result.stderr and "differ in family" in result.stderr
    assert "A.toml: normal; B.toml: laplace" in result.stderr
    ok = run("pool", files / "A.toml", files / "B.toml", "--out", out, "--family", "normal")
    assert ok.exit_code == 0 and read_prior_file(out).get("fly_ash").pool == "linear"
    # or the [pool] table of a file says which
    (files / "B.toml").write_text(B + '\n[pool]\nfamily = {fly_ash = "laplace"}\n')
    ok = run("pool", files / "A.toml", files / "B.toml", "--out", out)
    assert ok.exit_code == 0 and read_prior_file(out).get("fly_ash").family == "laplace"


@pytest.mark.parametrize(
    "change, field",
    [
        (('response = "strength"', 'response = "slump"'), "[study]: field 'response'"),
        (('response_units = "MPa"', 'response_units = "psi"'), "[study]: field 'response_units'"),
        (('fly_ash = "kg/m3"', 'fly_ash = "lb/yd3"'), "[units]: field 'fly_ash'"),
    ],
)
def test_files_of_another_study_are_refused(files, change, field):
    (files / "B.toml").write_text(B.replace(*change))
    out = files / "pooled.toml"
    result = run("pool", files / "A.toml", files / "B.toml", "--out", out, "--family", "normal")
    assert result.exit_code == 2 and not out.exists()
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and "B.toml" in lines[0] and field in lines[0]


def test_model_tables_are_compared():
    from elicit.pool_files import check_same_study

    a = {"study": {"response": "y"}, "model": {"formula": "y ~ x"}}
    b = {"study": {"response": "y"}, "model": {"formula": "y ~ x + z"}}
    with pytest.raises(InputError, match=r"b.toml: \[model\]: field 'formula'"):
        check_same_study([("a.toml", a), ("b.toml", b)])
    check_same_study([("a.toml", a), ("c.toml", dict(a))])


@pytest.mark.parametrize(
    "args, message",
    [
        (["--weight", "nobody=2"], "no statement by 'nobody'"),
        (["--weight", "agronomist A=-1"], "must be positive"),
        (["--weight", "agronomist A"], "expected NAME=VALUE"),
        (["--family", "fly_ash=wide"], "unknown family 'wide'"),
        (["--family", "cement=normal"], "'cement' is not a coefficient"),
    ],
)
def test_bad_options_are_one_line_and_write_nothing(files, args, message):
    out = files / "pooled.toml"
    result = run("pool", files / "A.toml", files / "B.toml", "--out", out, *args)
    assert result.exit_code == 2 and not out.exists()
    assert message in result.stderr and len(result.stderr.strip().splitlines()) == 1


def _ig(low, high):
    from elicit.convert import noise_from_range

    shape, scale = noise_from_range(low, high, 0.9)
    return NoisePrior(None, low, high, 0.9, shape, scale, expert=f"e{low:g}")


def test_linear_noise_pool_matches_the_mixture_quantiles():
    a, b = _ig(2.0, 6.0), _ig(3.0, 9.0)
    pooled = pool_noise([a, b], method="linear", weights={"e2": 3.0})
    # the 5% and 95% sd quantiles of the 3:1 mixture of the inverse gammas on the variance
    # (Source: scipy.stats.invgamma cdf) are those of the matched inverse gamma
    d = [stats.invgamma(n.shape, scale=n.scale) for n in (a, b)]
    fitted = stats.invgamma(pooled.shape, scale=pooled.scale)
    for p in (0.05, 0.95):
        v = fitted.ppf(p)
        assert 0.75 * d[0].cdf(v) + 0.25 * d[1].cdf(v) == pytest.approx(p, abs=1e-9)


def test_log_noise_pool_is_the_normalised_product():
    a, b = _ig(2.0, 6.0), _ig(3.0, 9.0)
    pooled = pool_noise([a, b], method="log")
    # the geometric mean of the two densities, normalised on a grid (Source: scipy.stats
    # invgamma logpdf), against the closed-form inverse gamma
    v = np.linspace(0.5, 400.0, 400001)
    log = 0.5 * stats.invgamma(a.shape, scale=a.scale).logpdf(v)
    log += 0.5 * stats.invgamma(b.shape, scale=b.scale).logpdf(v)
    density = np.exp(log - log.max())
    density /= np.trapezoid(density, v)
    exact = stats.invgamma(pooled.shape, scale=pooled.scale).pdf(v)
    exact /= np.trapezoid(exact, v)  # both normalised on the same (truncated) grid
    assert np.max(np.abs(density - exact)) < 1e-4 * exact.max()


def test_known_noise_sds_pool_only_when_equal():
    known = NoisePrior(2.0, None, None, None, None, None)
    assert pool_noise([known, known]).sd == 2.0
    with pytest.raises(InputError, match="known sd"):
        pool_noise([known, _ig(2.0, 6.0)])
