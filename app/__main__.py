"""`python -m rankscope`: the same command line as `rankscope`."""

from rankscope.cli import main

raise SystemExit(main())
