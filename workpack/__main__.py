from workpack.cli import main

raise SystemExit(main())
