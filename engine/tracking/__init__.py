"""What happened in an adopted budget's months: metered and billed actuals to set beside it.

:mod:`engine.tracking.actuals` gives a meter's metered energy per day and its adopted model's
prediction under the weather that happened; :mod:`engine.tracking.bill_actuals` gives a bill
account's billed energy and cost per day. Adopting a budget and tracking it for a project are
steps: :mod:`engine.steps.adopting` and :mod:`engine.steps.tracking`.
"""
