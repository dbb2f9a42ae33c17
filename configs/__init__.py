"""Demo scenarios and study files; installed as the package data of ``uq.demos``."""
