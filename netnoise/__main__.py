"""``python -m netnoise`` runs the command line."""

from netnoise.cli import main

raise SystemExit(main())
