"""The history: every plan made, what was fitted and seen after each event, the fleet's state.

* :mod:`~tuning.history.schema` — the tables and their migrations (versioned);
* :mod:`~tuning.history.store` — :func:`open_history` (a SQLite file or a PostgreSQL URL) and
  :class:`History`: record plans and outcomes (one transaction each), read them back
  (:meth:`History.plan_for`, :meth:`History.outcomes`: the calibration's inputs);
* :mod:`~tuning.history.outcomes` — the outcomes file (CSV): its columns, read and checked;
* :mod:`~tuning.history.state` — settings bikes still wear, what changed between two plans;
* :mod:`~tuning.history.learn` — the calibration the recorded outcomes give (:func:`calibration_of`).
"""

from tuning.history.learn import calibration_of
from tuning.history.outcomes import COLUMNS, FORM_FIELD_OF, read_outcomes
from tuning.history.state import Fitted, fitted_settings, fitted_state, plan_changes
from tuning.history.store import History, event_key, is_url, open_history

__all__ = [
    "COLUMNS",
    "FORM_FIELD_OF",
    "Fitted",
    "History",
    "calibration_of",
    "event_key",
    "fitted_settings",
    "fitted_state",
    "is_url",
    "open_history",
    "plan_changes",
    "read_outcomes",
]
