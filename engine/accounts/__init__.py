"""Accounts that only have bills: modelled from their billing periods, budgeted beside meters.

:mod:`engine.accounts.split` shares a billing period's energy among its days (by days and by
degree-days); :mod:`engine.accounts.model` fits an account's model; :mod:`engine.accounts.plan`
checks its bills and backtests the model over them; :mod:`engine.accounts.paths` simulates its
budget paths on the meters' weather scenarios; :mod:`engine.accounts.budget` puts them into a
budget run; :mod:`engine.accounts.utility` says which utility an account is. Which account each
meter belongs to is kept by the step :mod:`engine.steps.account_membership`.
"""
