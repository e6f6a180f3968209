from frostwatch.cli import main

raise SystemExit(main())
