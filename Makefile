# qhdesign developer commands. Everything runs inside .venv (Python >= 3.12).
SHELL := /bin/bash
VENV := .venv
PY := $(VENV)/bin/python
QH := $(VENV)/bin/qhdesign
OUT := results/demo
STACK := stacks/ql2417_screened.toml

# First interpreter that really runs and is >= 3.12 (pyenv shims can exist but fail).
PYTHON_CANDIDATES := python3.13 python3.12 python3 $(wildcard $(HOME)/.pyenv/versions/3.1[2-9]*/bin/python3)
BASE_PY := $(shell for p in $(PYTHON_CANDIDATES); do \
    if $$p -c 'import sys; sys.exit(0 if sys.version_info >= (3, 12) else 1)' >/dev/null 2>&1; then \
      command -v $$p 2>/dev/null || echo $$p; break; fi; done)

.PHONY: demo test test-fast test-heavy bench lint venv clean validation browser

$(VENV)/.installed: pyproject.toml
	@if [ -z "$(BASE_PY)" ]; then \
	  echo "error: no Python >= 3.12 found (tried: $(PYTHON_CANDIDATES))" >&2; exit 2; fi
	@echo "using $(BASE_PY)"
	@test -x $(PY) || $(BASE_PY) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	@touch $@

venv: $(VENV)/.installed

demo: $(VENV)/.installed
	@mkdir -p $(OUT)
	$(QH) check $(STACK) --plot $(OUT)/layers.png
	$(QH) bands $(STACK) --json $(OUT)/bands.json --plot $(OUT)/bands.png
	$(QH) gate $(STACK) --from 0.2 --to -1.0 --step 0.01 --csv $(OUT)/gate.csv \
	  --json $(OUT)/gate.json --plot $(OUT)/gate.png
	@rm -f $(OUT)/setback.csv $(OUT)/setback.csv.sweep.json  # a fresh sweep, not a resume
	$(QH) sweep sweeps/ql2417_setback_bands.toml --csv $(OUT)/setback.csv
	$(QH) plot-sweep $(OUT)/setback.csv --x layers.setback_upper.thickness \
	  --y layers.setback_lower.thickness --color "primary_density_cm^-2" \
	  --contour "primary_density_cm^-2=1.0e11" --plot $(OUT)/setback_window.png
	@rm -f $(OUT)/setback_mobility.csv $(OUT)/setback_mobility.csv.sweep.json
	$(QH) sweep sweeps/ql2417_setback_mobility.toml --csv $(OUT)/setback_mobility.csv
	$(QH) plot-sweep $(OUT)/setback_mobility.csv --x layers.setback_upper.thickness \
	  --y layers.setback_lower.thickness --color "primary_mobility_cm^2/Vs" \
	  --contour "primary_mobility_cm^2/Vs=6e5" --plot $(OUT)/setback_mobility.png
	$(QH) edge $(STACK) --gate-voltage -1.0 --field 2 --filling 1 --perimeter "4 um" \
	  --json $(OUT)/edge.json --plot $(OUT)/edge.png --fields $(OUT)/edge.xdmf
	$(QH) island $(STACK) --gate-radius "1.25 um" --gate-voltage -1.0 --filling 1/3 --gap "120 ueV" \
	  --field-range "11.5..14 T:20" --csv $(OUT)/island_vs_B.csv \
	  --json $(OUT)/island.json --plot $(OUT)/island.png
	$(QH) report $(STACK) --field "2 T" --gate-voltage -1.0 --island "1.15 um" --filling 1/3 \
	  --gap-energy "120 ueV" -o $(OUT)/review.html --json $(OUT)/review.json
	@echo "demo results in $(OUT)/"

test: $(VENV)/.installed
	$(PY) -m pytest -q

# The quick tier while iterating: everything but the slow (> ~20 s) and the mpiexec tests.
test-fast: $(VENV)/.installed
	$(PY) -m pytest -q -m "not slow and not mpi"

# The heavy tier: resolution studies that take minutes to tens of minutes on 2 cores (not run in CI; each
# test says what it checks and how long it took when measured).
test-heavy: $(VENV)/.installed
	$(PY) -m pytest -q --heavy -m heavy

# Regenerate the checked table of docs/validation.md from a run of the reference tests (each
# records its check, source, tolerance and deviation; scripts/render_validation.py renders them).
validation: $(VENV)/.installed
	@rm -f results/validation.json; mkdir -p results
	QHDESIGN_VALIDATION_JSON=results/validation.json $(PY) -m pytest -q -m "not mpi" tests/reference
	$(PY) scripts/render_validation.py results/validation.json docs/validation.md

# Headless Chromium (Debian package) for the browser test of the design review; installs with
# apt-get as root, only where it is missing.
browser:
	@command -v chromium >/dev/null 2>&1 || { \
	  if [ "$$(id -u)" = 0 ]; then apt-get update && apt-get install -y chromium; \
	  else echo "error: chromium is missing; install it as root: apt-get install -y chromium" >&2; exit 2; fi; }
	@chromium --version

bench: $(VENV)/.installed
	@for b in benchmarks/bench_*.py; do echo "== $$b"; $(PY) $$b || exit 1; done

lint: $(VENV)/.installed
	$(VENV)/bin/ruff check qhdesign tests benchmarks notebooks
	$(VENV)/bin/ruff format --check qhdesign tests benchmarks notebooks

clean:
	rm -rf $(VENV) results .pytest_cache
