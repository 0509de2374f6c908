"""What a person reads: figures, the run summary, the section report.

Every number in their text goes through :mod:`vpkit.display` (the one rounding rule,
shared with the warnings' texts).

- :mod:`.figures`: the report figure of a run and the overview of many (matplotlib
  Figures, no pyplot).
- :mod:`.run_summary`: one run's Markdown summary and output files.
- :mod:`.section_report`: many runs' HTML, Markdown and CSV report.

Renderers take results and never analyse; nothing here imports :mod:`vpkit.analysis`.
Importing this package does not load matplotlib (the modules do, when imported).
"""
