"""The one time-zone check every reader, setting and cleaning step goes through."""

import pytest

from engine.errors import InputError
from engine.zone_names import require_zone


@pytest.mark.parametrize("name", ["America/Chicago", "Europe/Berlin", "UTC"])
def test_known_iana_zones_pass_unchanged(name: str) -> None:
    assert require_zone(name) == name


@pytest.mark.parametrize("name", ["Mars/Olympus", "", "../etc/passwd", None, 5])
def test_anything_else_is_refused_with_the_source_named(name: object) -> None:
    with pytest.raises(InputError, match=r"the step's zone .* is not a known time zone") as caught:
        require_zone(name, "the step's zone")
    assert "IANA" in (caught.value.hint or "")
