"""``python -m bot.demo`` (``make demo``): see :mod:`bot.demo.cli`."""

from bot.demo.cli import main

raise SystemExit(main())
