# contactplan: the two set-up commands are `make run` and `make test`.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed-test
DEMO := resources/demo/week.toml

.PHONY: run test venv bench screenshots package clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	touch $(STAMP)

venv: $(STAMP)

run: $(STAMP)
	@$(PY) packaging/qt_libs.py
	$(PY) -m contactplan $(DEMO)

test: $(STAMP)
	# one test process per core (pytest-xdist): the suite is CPU-bound
	QT_QPA_PLATFORM=offscreen MPLBACKEND=Agg $(PY) -m pytest -n auto

bench: $(STAMP)
	@# every benchmark runs; the exit status says whether any missed a target or failed
	@status=0; for b in benchmarks/bench_*.py; do echo "== $$b"; QT_QPA_PLATFORM=offscreen $(PY) $$b || status=1; done; exit $$status

screenshots: $(STAMP)
	QT_QPA_PLATFORM=offscreen MPLBACKEND=Agg $(PY) -m contactplan.app.screenshots docs/images

package: $(STAMP)
	$(PY) -m pip install --quiet 'pyinstaller>=6.0'
	$(PY) -m PyInstaller --noconfirm --clean --distpath dist --workpath build packaging/contactplan.spec
	QT_QPA_PLATFORM=offscreen bash packaging/smoke.sh dist/contactplan/contactplan resources/demo/week.toml

clean:
	rm -rf $(VENV) build dist *.egg-info .pytest_cache
