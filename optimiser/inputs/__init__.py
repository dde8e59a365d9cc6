"""The user's files: the design file (with its transformer build block) and the spec file,
validated into models, every problem reported as ``file:line:col: field: message``."""
