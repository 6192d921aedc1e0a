"""A test model that forecasts a load known by construction, so a budget test sees only the
errors it is given."""

from __future__ import annotations

from typing import ClassVar

import numpy as np
import pandas as pd

from engine.models._family import ModelFamily
from engine.models.base import ModelInputs


class KnownLoad(ModelFamily):
    """Predicts ``load(inputs)`` (kWh per interval) and learns nothing from a fit."""

    family: ClassVar[str] = "known_load_test"
    label: ClassVar[str] = "the known load (test model)"
    explainable: ClassVar[bool] = True
    n_parameters_ = 0

    def load(self, inputs: ModelInputs) -> np.ndarray:
        raise NotImplementedError

    def fit(self, inputs: ModelInputs) -> KnownLoad:
        return self

    def predict(self, inputs: ModelInputs) -> pd.Series:
        return pd.Series(self.load(inputs), index=inputs.index)

    def settings(self) -> dict:
        return {}
