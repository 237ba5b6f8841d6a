"""The application layer: one module per job a user brings (assess a procedure, plan an
audit, decide a policy, audit a log, run the demo). Each combines models, records and the
audit; none renders output (that is :mod:`shufflecheck.report`)."""
