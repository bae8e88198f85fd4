from . import main; import sys; sys.exit(main())
