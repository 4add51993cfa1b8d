# Two commands in a fresh clone: `make demo` and `make test`.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
DEMO   := fixtures/demo
OUT    := build/demo

.PHONY: demo test venv clean plugin-package

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(VENV)/.installed: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $@

venv: $(VENV)/.installed

demo: venv
	mkdir -p $(OUT)
	# Exit code 1 means the demo's deliberate faults were found, as intended.
	$(BIN)/netaudit check $(DEMO)/greenhouse.net --json $(OUT)/report.json \
	  --html $(OUT)/report.html --sarif $(OUT)/report.sarif \
	  --junit $(OUT)/report.junit.xml --markdown $(OUT)/report.md; \
	  code=$$?; [ $$code -le 1 ] || exit $$code
	@echo "reports written to $(OUT)/"

test: venv
	# pytest exits 5 when it collects no tests; treat that as a failure to notice, not a pass.
	$(BIN)/python -m pytest -q

plugin-package: venv
	# KiCad plugin-manager zip (Install from File...): build/plugin/netaudit-kicad-VERSION.zip
	$(BIN)/python plugin/build_package.py --out build/plugin

clean:
	rm -rf $(VENV) build
