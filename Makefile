# widen: `make demo` and `make test` do all set-up on a fresh machine with Python 3.11 and make.
PYTHON ?= python3.11
VENV := .venv
BIN := $(VENV)/bin
DEMO := build/demo
STORE := build/store
POSTINGS ?= 20000

.PHONY: demo test lint bench scale evaluate choices ablation drill clean

# The venv is (re)built when pyproject.toml changes.
$(BIN)/.installed: pyproject.toml
	@command -v $(PYTHON) >/dev/null 2>&1 || { echo "need $(PYTHON) (or run: make PYTHON=python3 ...)"; exit 1; }
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $@

$(DEMO)/postings.jsonl: $(wildcard demo_postings/*.py) | $(BIN)/.installed
	$(BIN)/python -m demo_postings.generate --board tollbridge --out $(DEMO) --postings $(POSTINGS) --seed 7

PORT ?= 8000

# Train the demo store (a refused gate, exit 3, still leaves a serving bundle), then serve it.
demo: $(BIN)/.installed $(DEMO)/postings.jsonl
	$(BIN)/widen train --corpus $(DEMO)/postings.jsonl --store $(STORE) --config demo_postings/widen.toml || [ $$? -eq 3 ]
	$(BIN)/widen bundles --store $(STORE)
	$(BIN)/widen expand 'lorry driver' --store $(STORE)
	$(BIN)/widen evaluate --store $(STORE) --postings $(DEMO)/open_postings.jsonl --queries $(DEMO)/queries.jsonl --truth $(DEMO)/truth.json --out build/eval
	@echo "serving the demo store; Ctrl-C stops it"
	@token=$$($(BIN)/python -c 'import secrets; print(secrets.token_urlsafe(12))'); \
	  echo "review token for this demo run (the /review page asks for it once): $$token"; \
	  WIDEN_REVIEW_TOKEN=$$token WIDEN_QUERY_LOG=$(DEMO)/query_log.jsonl exec $(BIN)/widen serve --store $(STORE) --port $(PORT) --demo-index $(DEMO)/open_postings.jsonl

CODE := widen training service tests demo_postings bench

lint: $(BIN)/.installed
	$(BIN)/ruff check $(CODE)
	$(BIN)/ruff format --check $(CODE)
	$(BIN)/mypy widen training service bench demo_postings tests
	$(BIN)/lint-imports

test: lint
	$(BIN)/python -m pytest -q

bench: $(BIN)/.installed $(DEMO)/postings.jsonl
	@command -v wrk >/dev/null 2>&1 || { [ "$$(id -u)" = 0 ] && apt-get install -y -qq wrk >/dev/null 2>&1 || (apt-get update -qq && apt-get install -y -qq wrk); } || { echo "the server benchmark needs wrk (apt-get install wrk)"; exit 1; }
	$(BIN)/python -m bench.run --demo $(DEMO) --out build/bench
	$(BIN)/python -m bench.concepts --out build/concepts

# A national board's size: 20,000, 200,000 and 1,000,000 real-title postings (docs/benchmarks.md); about an hour.
scale: $(BIN)/.installed
	@command -v wrk >/dev/null 2>&1 || { [ "$$(id -u)" = 0 ] && (apt-get update -qq && apt-get install -y -qq wrk); } || { echo "the scale bench needs wrk"; exit 1; }
	$(BIN)/python -m bench.scale --out build/scale

# Both demo boards at full size, every method, the index window curve and the truth scorecard (README, "Search impact").
evaluate: $(BIN)/.installed
	$(BIN)/python -m bench.boards --out build/boards

# Every way of building the query a front end sends, on both boards (README, "How widen builds the query").
choices: $(BIN)/.installed
	$(BIN)/python -m bench.choices --out build/choices

# Two replicas behind nginx, one killed and restarted and a new bundle published under wrk load (README, "Failover drill").
drill: $(BIN)/.installed $(DEMO)/postings.jsonl
	@for tool in nginx wrk; do command -v $$tool >/dev/null 2>&1 || [ -x /usr/sbin/$$tool ] || { [ "$$(id -u)" = 0 ] && (apt-get update -qq && apt-get install -y -qq nginx-light wrk); } || { echo "the drill needs nginx and wrk"; exit 1; }; done
	test -f $(STORE)/CURRENT || $(BIN)/widen train --corpus $(DEMO)/postings.jsonl --store $(STORE) --config demo_postings/widen.toml || [ $$? -eq 3 ]
	$(BIN)/python -m bench.drill --demo $(DEMO) --store $(STORE) --out build/drill

# widen's vectors on the real text gensim ships, stage by stage against gensim direct (README, "Real text").
ablation: $(BIN)/.installed
	$(BIN)/python -m bench.ablation --out build/ablation

clean:
	rm -rf build
