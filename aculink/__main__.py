from aculink.cli import main

raise SystemExit(main())
