# Two set-up commands: `make demo` and `make test`. Each creates .venv on first use;
# the demo needs only the runtime and notebook extras, the tests add their own.
PYTHON ?= python3
VENV ?= .venv
PY := $(VENV)/bin/python
OUT ?= out/demo

.PHONY: demo test lint bench notebooks clean

$(VENV)/.created:
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	touch $@

$(VENV)/.demo: $(VENV)/.created pyproject.toml
	$(PY) -m pip install --quiet -e '.[notebook]'
	touch $@

$(VENV)/.test: $(VENV)/.created pyproject.toml
	$(PY) -m pip install --quiet -e '.[test,notebook,reference,browser]'
	touch $@

demo: $(VENV)/.demo
	$(PY) -m vpkit analyze data/demo/*.csv --out $(OUT)
	$(PY) -m vpkit report data/demo --out $(OUT)/demo-report
	$(PY) -m vpkit report data/section --out $(OUT)/section-report
	@echo "Demo outputs: per-run figures, tables and summaries in $(OUT)/;"
	@echo "the three demo runs' report in $(OUT)/demo-report/report.html;"
	@echo "an invented 14-group ethanol section, with its consensus, in"
	@echo "$(OUT)/section-report/report.html (and report.md, summary.csv, consensus.csv)"

# JupyterLab on the notebooks/ folder (stop it with Ctrl-C). Opens a browser where one
# exists; otherwise it prints the address to open.
notebooks: $(VENV)/.created pyproject.toml
	$(PY) -m pip install --quiet -e '.[lab]'
	$(VENV)/bin/jupyter lab notebooks/

test: $(VENV)/.test
	$(PY) -m ruff check vpkit tests benchmarks data
	$(PY) -m pytest -q

# Every benchmark prints its figures; the run ends with one table of figure, target,
# now, ratio and pass/fail (benchmarks/scoreboard.py).
BENCH_RESULTS := out/bench-figures.jsonl
bench: $(VENV)/.test
	mkdir -p out && rm -f $(BENCH_RESULTS)
	VPKIT_BENCH_RESULTS=$(BENCH_RESULTS) $(PY) benchmarks/bench_core.py
	VPKIT_BENCH_RESULTS=$(BENCH_RESULTS) $(PY) benchmarks/bench_panel.py --browser
	VPKIT_BENCH_RESULTS=$(BENCH_RESULTS) $(PY) benchmarks/bench_batch.py
	VPKIT_BENCH_RESULTS=$(BENCH_RESULTS) $(PY) benchmarks/bench_planner.py
	$(PY) benchmarks/scoreboard.py $(BENCH_RESULTS)

clean:
	rm -rf $(VENV) out .pytest_cache
