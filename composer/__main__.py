from composer.cli import main

raise SystemExit(main())
