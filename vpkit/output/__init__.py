"""What a person reads: figures, the run summary, the section report, and the one
rounding rule they all use.

- :mod:`.display`: numbers as text (GUM 7.2.6 rounding) in the chosen units.
- :mod:`.figures`: the report figure of a run and the overview of many (matplotlib
  Figures, no pyplot).
- :mod:`.run_summary`: one run's Markdown summary and output files.
- :mod:`.section_report`: many runs' HTML, Markdown and CSV report.

Renderers take results and never analyse; nothing here imports :mod:`vpkit.analysis`.
Importing this package does not load matplotlib (the modules do, when imported).
"""
