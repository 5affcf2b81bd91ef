"""The experiment layer: whole runs, from files and settings to results, each one library call.

Between the libraries below (corpus, parsing, features, models, evaluation)
and the command line: each module here reads its inputs, checks every output
before the work, runs it and returns a dataclass (or the report data), which
``reports`` renders and ``cli`` prints. Settings are resolved once
(:mod:`trainer.experiment.settings`).
"""
