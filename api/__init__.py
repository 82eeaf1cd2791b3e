"""wakeyard's HTTP API: a thin FastAPI adapter over the job store and the solver's spec."""
