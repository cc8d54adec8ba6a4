"""``python -m tools.scenario``: write the invented demo event."""

from tools.scenario.event import main

if __name__ == "__main__":
    raise SystemExit(main())
