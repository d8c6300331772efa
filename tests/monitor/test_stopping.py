"""Stop rules: the verdicts, and "N more hours" consistent with the sequence it projects."""
from __future__ import annotations

import numpy as np
import pytest

from spotkit.monitor.sequence import confidence_sequence, se_for_width
from spotkit.monitor.stopping import hours_to_halfwidth, needed_halfwidth, stop_verdict


@pytest.mark.parametrize(("est", "lo", "hi", "start"), [
    (2.0, 1.0, 3.0, "B is better on 10 m - you can stop"),
    (-2.0, -3.0, -1.0, "A is better on 10 m - you can stop"),
    (0.1, -0.3, 0.4, "no difference larger than 0.5 dB on 10 m - you can stop"),
    (0.4, -0.3, 1.2, "keep going on 10 m: about 5 more hours at the current rate"),
])
def test_verdicts(est, lo, hi, start):
    stop, text = stop_verdict("10m", est, lo, hi, hours_more=5.2)
    assert text.startswith(start)
    assert stop == (not start.startswith("keep going"))


def test_target_width_cap_and_too_few():
    assert stop_verdict("20m", 0.4, -0.1, 0.9, target_width_db=1.0, margin_db=0)[0]
    assert not stop_verdict("20m", 0.4, -0.1, 0.9, target_width_db=0.5, margin_db=0)[0]
    stop, text = stop_verdict("20m", 0.4, -0.3, 1.1, reached_cap=True)
    assert stop and "no clear answer" in text
    stop, text = stop_verdict("20m", 0.4, -0.3, 1.1, too_few="too few receivers yet")
    assert not stop and text == "keep going on 20 m: too few receivers yet"
    assert "no answer in sight" in stop_verdict("20m", 0.0, -0.9, 0.9, hours_more=np.nan)[1]


@pytest.mark.parametrize("se", [0.1, 0.3, 0.8])
def test_more_hours_reach_the_half_width_they_promise(se):
    """At the hours it names, the projected sequence (information growing with time) is as
    narrow as needed, and an hour earlier it is not yet."""
    tuned, hours, need = se_for_width(1.0), 6.0, 0.2
    more = float(hours_to_halfwidth(need, se, hours, se_tuned=tuned))
    assert more > 0

    def half(total):
        s = se * np.sqrt(hours / total)
        lo, hi = confidence_sequence(0.0, s, se_tuned=tuned)
        return float(hi)

    assert half(hours + more) <= need + 1e-9
    assert half(hours + more * 0.98) > need


def test_already_narrow_is_zero_and_a_systematic_floor_is_never():
    assert float(hours_to_halfwidth(5.0, 0.1, 10.0, se_tuned=0.25)) == 0.0
    assert np.isnan(hours_to_halfwidth(0.2, 0.1, 10.0, se_tuned=0.25, systematic_db=0.3))


def test_needed_half_width():
    # |est| to exclude 0, margin - |est| to fit within the margin, half the target width
    np.testing.assert_allclose(needed_halfwidth([0.1, 0.4, 2.0], margin_db=0.5),
                               [0.4, 0.4, 2.0])
    assert float(needed_halfwidth(0.1, margin_db=0.0, target_width_db=1.0)) == 0.5
