"""The terminal app's tests share the demo lab built once per module (see test_app)."""

from tests.tui.test_app import demo_db, demo_lab, due_naoh, lab  # noqa: F401 (fixtures)
