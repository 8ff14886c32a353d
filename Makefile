# talkthemes — make targets. `make demo` and `make test` work on a fresh machine.
PYTHON ?= python3
VENV   ?= .venv
BIN    := $(VENV)/bin
DEMO_WS ?= demo-work
DEMO_SIZE ?= 3000
DEMO_LANGUAGES ?= en
PORT ?= 8501

.PHONY: install demo test lint bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(VENV)/.installed: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e '.[dev]'
	touch $@

install: $(VENV)/.installed

demo: install
	$(BIN)/talkthemes demo --size $(DEMO_SIZE) --languages $(DEMO_LANGUAGES) --workspace $(DEMO_WS) --port $(PORT)

test: install
	$(BIN)/python -m pytest -q

lint: install
	$(BIN)/ruff check src tests bench
	$(BIN)/ruff format --check src tests bench

bench: install
	$(BIN)/python bench/ingest.py --n 20000
	$(BIN)/python bench/prepare.py 20000
	$(BIN)/python bench/lda_estep.py
	$(BIN)/python bench/parallel_ceiling.py
	$(BIN)/python bench/sweep.py --n 20000 --compare-workers
	$(BIN)/python bench/assign.py
	$(BIN)/python bench/viewer.py --size 20000

clean:
	rm -rf $(VENV) $(DEMO_WS) .pytest_cache
