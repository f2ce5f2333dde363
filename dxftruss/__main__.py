"""python -m dxftruss"""

from .cli import main

raise SystemExit(main())
