"""From an input model to model outputs: named marginals + copula (``inputs``), sample plans
carrying their own design metadata (``plans``), the chunked, seed-stable map/reduce engine
(``engine``) and the executors it runs on (``backends``: local processes, Dask)."""

__all__ = ["inputs", "plans", "engine", "backends"]
