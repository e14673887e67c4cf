"""What names a label's key: the fit (a fingerprint) and the topic number, checked the same way
on every back end."""

from __future__ import annotations

import numbers

from .._deprecation import renamed_parameters, warn_renamed
from .._validation import param_error
from . import _schema as _s

# Methods whose argument ``fit`` was called ``model`` in the first release.
renamed_fit = renamed_parameters(model="fit")


def fit_id(fit) -> str:
    """The fingerprint of a :class:`Fit`, or a fingerprint given as a string (the CLI's
    ``--fit``) (formerly ``model_id``)."""
    value = fit
    if not isinstance(fit, str):
        # Imported here so that opening a store does not load scipy (a Fit has loaded it).
        from ..models.fits import Fit

        value = fit.fingerprint if isinstance(fit, Fit) else None
    if not isinstance(value, str) or not value.strip() or len(value) > 200:
        raise param_error(
            "LabelStore", "fit", fit, "a Fit or its fingerprint string (1-200 characters)"
        )
    _s.check_text("fit", value)
    return value


def model_id(model) -> str:
    """Deprecated: use :func:`fit_id`."""
    warn_renamed("model_id()", "fit_id()")
    return fit_id(model)


def check_topic(topic) -> int:
    # The same bound on every back end: PostgreSQL's integer holds up to 2**31 - 1, so SQLite
    # refuses more too and a store moves between them unchanged.
    if (
        isinstance(topic, bool)
        or not isinstance(topic, numbers.Integral)
        or not 0 <= topic <= _s.INT_MAX
    ):
        accepted = f"a topic number, an integer from 0 to {_s.INT_MAX:,} (PostgreSQL's integer)"
        raise param_error("LabelStore", "topic", topic, accepted)
    return int(topic)
