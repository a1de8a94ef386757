from kinestat.app.cli import main

raise SystemExit(main())
