# slipsense: the two quick-start commands are `make demo` and `make test`.
# Each creates what it needs: a virtual environment in .venv (PyPI packages) and, for the QGIS
# tests, Debian's QGIS 3.22 (installed with apt-get when missing; needs root or sudo).
PYTHON ?= python3
VENV   ?= .venv
PY     := $(VENV)/bin/python
OUT    ?= demo_out

.PHONY: venv demo test test-engine test-qgis qgis plugin-zip clean bench

$(VENV)/.installed: pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	touch $@

venv: $(VENV)/.installed

demo: venv
	$(PY) -m slipsense.cli.main run demo_gpkg/demo_analysis.toml --out-dir $(OUT)

test: venv qgis
	$(PY) -m pytest tests --ignore=tests/qgis
	SLIPSENSE_CLI=$(abspath $(VENV))/bin/slipsense /usr/bin/python3 -m pytest tests/qgis -p no:cacheprovider

test-engine: venv
	$(PY) -m pytest tests --ignore=tests/qgis

test-qgis: venv qgis
	SLIPSENSE_CLI=$(abspath $(VENV))/bin/slipsense /usr/bin/python3 -m pytest tests/qgis -p no:cacheprovider

qgis:
	bash qgis_plugin/install_qgis.sh

bench: venv  ## benchmarks (minutes; BENCH_ARGS=--quick for a small run); writes bench/results.md
	$(PY) bench/run.py $(BENCH_ARGS)

plugin-zip:
	/usr/bin/python3 qgis_plugin/build_zip.py --out dist

clean:
	rm -rf $(VENV) $(OUT) dist
