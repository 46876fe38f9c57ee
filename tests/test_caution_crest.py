"""The voltage caution's crest of a source function, sampled in one numpy pass.

Closed forms (from memory): a sinusoid A sin(w t + phi) has crest |A|; a switched
exponential A (1 - exp(-t/tau)) approaches A from below; a trapezoidal clock of height A
has crest A. The threshold of the caution is the extra-low-voltage limit, 120 V ripple-
free DC (IEC 61140, from memory).
"""

from __future__ import annotations

import numpy as np
import pytest

from handcheck.verify.safety import _crest, _sampled
from handcheck.worksheet.sourcefunction import read_function

_FUNCTIONS = [
    ("325*sin(2*pi*50*t + 0.3) V", 325.0),
    # sampled up to the last start plus three time scales, 7 ms: 150 (1 - e^-3.5)
    ("150*(1 - exp(-t/2 ms))*step(t - 1 ms) V", 150.0 * (1 - np.exp(-3.5))),
    ("5*repeat(1 ms, edge(t, 10 us) - edge(t - 0.5 ms, 10 us)) V", 5.0),
    ("24 + 3*t*exp(-t/1 ms)*step(t) V", 24.0 + 3e-3 / np.e),  # t e^(-t/tau) peaks at tau, tau/e
]


@pytest.mark.parametrize(("text", "crest"), _FUNCTIONS)
def test_crest_against_the_closed_form(text, crest):
    function = read_function(text, "V", "voltage")
    assert _crest(function) == pytest.approx(crest, rel=2e-3)


@pytest.mark.parametrize(("text", "crest"), _FUNCTIONS)
def test_one_pass_equals_the_value_at_each_instant(text, crest):
    function = read_function(text, "V", "voltage")
    times = np.random.default_rng(7).uniform(0.0, 0.01, 300)
    expected = [function.value(float(t)) for t in times]
    np.testing.assert_allclose(_sampled(function, times), expected, rtol=1e-12, atol=1e-12 * max(crest, 1.0))
