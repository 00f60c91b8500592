# Plenum — the front door. `make help` lists the targets.
PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
PIP    := $(VENV)/bin/pip
STAMP  := $(VENV)/.installed
SYSSTAMP := .system-packages.ok
HOST   ?= 127.0.0.1
PORT   ?= 8000
# Debian packages the app and its tests need: Pango/HarfBuzz for WeasyPrint,
# fonts, poppler (pdftoppm) for PDF checks, Chromium for browser tests, Node.js to
# run the phone's sync module under test.
SYSTEM_PACKAGES := libpango-1.0-0 libpangoft2-1.0-0 libharfbuzz-subset0 fonts-dejavu-core poppler-utils chromium nodejs

.PHONY: help install system run serve demo migrate test test-fast lint format bench clean worker beat

help: ## list the targets
	@grep -E '^[a-z-]+:.*## ' $(MAKEFILE_LIST) | awk -F':.*## ' '{printf "  make %-10s %s\n", $$1, $$2}'

$(STAMP): requirements.txt constraints.txt
	test -d $(VENV) || $(PYTHON) -m venv $(VENV)
	$(PIP) install -q --upgrade pip
	$(PIP) install -q -r requirements.txt -c constraints.txt
	touch $(STAMP)

install: $(STAMP) ## create .venv and install the Python dependencies

system: ## install the Debian packages (needs root or sudo; skipped when present)
	@missing=""; for p in $(SYSTEM_PACKAGES); do dpkg -s $$p >/dev/null 2>&1 || missing="$$missing $$p"; done; \
	if [ -n "$$missing" ]; then \
	  echo "Installing Debian packages:$$missing"; \
	  if [ "$$(id -u)" = 0 ]; then SUDO=""; else SUDO="sudo"; fi; \
	  $$SUDO apt-get update -qq && DEBIAN_FRONTEND=noninteractive $$SUDO apt-get install -y -qq $$missing >/dev/null \
	  || { echo "Could not install:$$missing — install them with apt-get and rerun."; exit 1; }; \
	fi

migrate: install
	$(PY) manage.py migrate --noinput

demo: migrate ## load the invented demo scenario (idempotent)
	$(PY) manage.py load_demo

# The address labels, calendar feeds, e-mails and the start-up banner give: where `make run` serves, unless set.
run: PLENUM_PUBLIC_URL ?= http://$(HOST):$(PORT)
run: export PLENUM_PUBLIC_URL := $(PLENUM_PUBLIC_URL)

run: system install ## install, migrate, load the demo and serve at http://127.0.0.1:8000 (HOST=, PORT= to change)
	$(PY) manage.py migrate --noinput
	$(PY) manage.py load_demo
	$(PY) manage.py collectstatic --noinput -v 0
	$(PY) manage.py runserver $(HOST):$(PORT)

test: system install ## the whole test suite
	$(PY) -m pytest

test-fast: install ## the suite without browser tests
	$(PY) -m pytest -m "not browser"

# Strictly typed (pyproject.toml's mypy overrides): the calculations and the services typed so far.
TYPED := engineering accounts/services inventory/services.py reports/services.py automation/services.py \
  scheduling/services scheduling/task_rows.py inspections/services/__init__.py inspections/services/findings \
  inspections/services/reading_check.py inspections/services/form_evaluation.py inspections/services/photos.py \
  inspections/services/library.py inspections/services/form_check.py inspections/services/signoff.py \
  inspections/services/sync.py inspections/services/sync_flags.py inspections/services/sync_answers.py

lint: install ## ruff, the import-layering contracts and mypy (strict on engineering/ and the typed services)
	$(VENV)/bin/ruff check .
	$(VENV)/bin/ruff format --check .
	$(VENV)/bin/lint-imports
	$(VENV)/bin/mypy $(TYPED)

format: install ## format the code
	$(VENV)/bin/ruff format .
	$(VENV)/bin/ruff check --fix .

bench: system install ## benchmarks (small size; BENCH_ARGS=--large for the big one)
	$(PY) -m bench $(BENCH_ARGS)

worker: install ## a Celery worker (needs CELERY_BROKER_URL)
	$(VENV)/bin/celery -A config worker -l info

beat: install ## Celery beat, the periodic schedule (needs CELERY_BROKER_URL)
	$(VENV)/bin/celery -A config beat -l info

clean: ## remove the venv, the SQLite file and test output
	rm -rf $(VENV) db.sqlite3 .test-media test-output staticfiles
