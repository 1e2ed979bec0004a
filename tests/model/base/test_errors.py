"""InputError messages stay short and on one line."""

from __future__ import annotations

from model.base.errors import InputError


def test_input_error_shows_a_deeply_nested_value_briefly():
    value = inner = {}
    for _ in range(5000):
        inner["b"] = {}
        inner = inner["b"]
    message = str(InputError("field", value, "allowed"))
    assert len(message) < 200
