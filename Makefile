# solsphere: two commands do all set-up on a fresh clone.
#   make run    create .venv, install, run the demo (then serve the app; NO_SERVE=1 stops after the terminal part)
#   make test   create .venv, install test extras (and Debian's chromium for browser tests), run every test
PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.installed
DEMO   := data/demo/varnish_binder.csv
OUT    := out

.PHONY: run test test-fast test-lowest bench data browser-deps clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install -q --upgrade pip
	$(PY) -m pip install -q -e '.[test,structure]'
	touch $(STAMP)

run: $(STAMP)
	@mkdir -p $(OUT)
	$(VENV)/bin/solsphere fit $(DEMO) --save $(OUT)/demo-project.json
	$(VENV)/bin/solsphere rank $(OUT)/demo-project.json --top 10
	$(VENV)/bin/solsphere blend $(OUT)/demo-project.json --top 10
	$(VENV)/bin/solsphere share $(OUT)/demo-project.json -o $(OUT)/demo-sphere.html
	$(VENV)/bin/solsphere estimate 'CC1CCC(=O)O1' 'O=C1CC[C@H]2CO[C@@H]1O2'
	@echo "Shareable map written to $(OUT)/demo-sphere.html"
ifndef NO_SERVE
	$(VENV)/bin/solsphere app $(OUT)/demo-project.json --host 127.0.0.1 --port 8050
endif

browser-deps:
	@if [ ! -x /usr/bin/chromium ] || [ ! -x /usr/bin/chromedriver ]; then \
	  if [ "$$(id -u)" = "0" ]; then \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium chromium-driver >/dev/null; \
	  else echo "chromium missing: install Debian's chromium and chromium-driver (as root) for the browser tests"; fi; \
	fi

# Test runs keep bytecode caches (the gitignored __pycache__ folders) even where
# PYTHONDONTWRITEBYTECODE is set: pytest then rewrites the test files' asserts once,
# not in each worker of every run (collecting took 14 s per worker without, 5 s with).
PYTEST = PYTHONDONTWRITEBYTECODE= $(1)/bin/python -m pytest

test: $(STAMP) browser-deps
	$(call PYTEST,$(VENV))

test-fast: $(STAMP)
	$(call PYTEST,$(VENV)) -m "not browser and not slow"

# every dependency at the lowest version pyproject.toml allows (constraints/lowest.txt,
# written by tools/lowest_versions.py), in its own .venv-lowest, then every test but the
# browser's (slow ones too: statistics may move with numpy and scipy): a lower bound that
# is too low fails here (CI runs it after make test, see .ci/run)
LOWEST := .venv-lowest
test-lowest:
	$(PYTHON) tools/lowest_versions.py --check
	rm -rf $(LOWEST)
	$(PYTHON) -m venv $(LOWEST)
	$(LOWEST)/bin/python -m pip install -q --upgrade pip
	$(LOWEST)/bin/python -m pip install -q -c constraints/lowest.txt -e '.[test,structure]'
	$(LOWEST)/bin/python -m pip list --format=freeze > $(LOWEST)/versions.txt
	$(call PYTEST,$(LOWEST)) -m "not browser" -p no:cacheprovider --timeout 900

bench: $(STAMP)
	@fail=0; for f in tests/perf/bench_*.py; do $(PY) $$f || fail=1; done; exit $$fail

data: $(STAMP)
	$(PY) data/build_solvents.py
	$(PY) data/build_mixtures.py
	$(PY) data/build_structure_model.py

clean:
	rm -rf $(VENV) $(LOWEST) $(OUT) build *.egg-info
