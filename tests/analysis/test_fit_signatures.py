"""The fit functions take their arguments in one order, so a caller never has to remember which is which."""

from __future__ import annotations

import inspect

import numpy as np
import pytest

from benchlog.analysis.fits import fit_auto, fit_diode, fit_knee, fit_resistive

FITS = (fit_resistive, fit_knee, fit_diode, fit_auto)


@pytest.mark.parametrize("fit", FITS, ids=lambda f: f.__name__)
def test_points_then_accuracy_then_keywords(fit):
    params = inspect.signature(fit).parameters
    positional = [p.name for p in params.values() if p.kind is inspect.Parameter.POSITIONAL_OR_KEYWORD]
    assert positional == ["current_a", "drop_v", "accuracy"]
    assert params["temperature_c"].kind is inspect.Parameter.KEYWORD_ONLY


def test_a_temperature_passed_where_the_accuracy_goes_is_refused():
    # The old diode order (current, drop, temperature, accuracy) must not slip through as an accuracy.
    i = np.geomspace(0.01, 1.0, 12)
    v = 2 * 0.0257 * np.log(i / 1e-9 + 1)  # the Shockley law, n = 2 (handbook formula)
    with pytest.raises(TypeError):
        fit_diode(i, v, 25.0)  # temperature_c is keyword-only and required
