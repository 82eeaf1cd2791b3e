from wakeyard.cli.main import main

raise SystemExit(main())
