# Everyday targets. Each one installs what it needs (a virtual environment in
# .venv, and ngspice from the Debian packages when it is missing).
VENV   ?= .venv
PY     := $(VENV)/bin/python
SUDO   := $(shell [ "$$(id -u)" = 0 ] || echo sudo)
OUT    ?= build/demo

.PHONY: demo demo-broadband test lint bench fuzz simulators ngspice venv clean

venv: $(VENV)/.installed

$(VENV)/.installed: pyproject.toml
	python3 -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test,plot]'
	touch $@

# The two open simulators the augmented netlists are tested in (Debian packages).
simulators:
	@if ! command -v ngspice >/dev/null 2>&1 || ! ldconfig -p | grep -q 'libngspice\.so ' \
	    || ! command -v gnucap >/dev/null 2>&1; then \
	  echo "installing ngspice and gnucap from the Debian packages" >&2; \
	  $(SUDO) apt-get update -qq && \
	  DEBIAN_FRONTEND=noninteractive $(SUDO) apt-get install -y -qq \
	    ngspice libngspice0 libngspice0-dev gnucap >/dev/null; \
	fi

ngspice: simulators

demo: simulators venv
	@mkdir -p $(OUT)
	$(VENV)/bin/parasite augment fixtures/demo/buck.cir fixtures/demo/buck.routes.toml \
	    -o $(OUT)/buck.augmented.cir --report $(OUT)/buck.report.json
	$(VENV)/bin/parasite report fixtures/demo/buck.cir fixtures/demo/buck.routes.toml
	$(VENV)/bin/parasite ring fixtures/demo/buck.cir fixtures/demo/buck.routes.toml --node sw \
	    --measured fixtures/demo/buck.measured.csv --plot $(OUT)/buck.ring.png
	@echo; echo "== The same edges as probe sw-long-ground reads them (14 cm ground lead):"
	$(VENV)/bin/parasite ring fixtures/demo/buck.cir fixtures/demo/buck.routes.toml --node sw \
	    --probe sw-long-ground --plot $(OUT)/buck.probe-sw-long-ground.png
	@echo; echo "== The same edges as probe sw-spring reads them (6 mm ground spring):"
	$(VENV)/bin/parasite ring fixtures/demo/buck.cir fixtures/demo/buck.routes.toml --node sw \
	    --probe sw-spring --plot $(OUT)/buck.probe-sw-spring.png
	@echo; echo "Pictures in $(OUT)/: buck.ring.png, buck.probe-sw-long-ground.png, buck.probe-sw-spring.png"
	@echo; echo "== DC-only copper vs broadband ladders (skin and proximity effect): make demo-broadband"

# The switch-node ring with DC copper and with broadband R-L ladders, side by side (about a minute).
demo-broadband: simulators venv
	@mkdir -p $(OUT)
	$(VENV)/bin/parasite augment fixtures/demo/buck.cir fixtures/demo/buck.routes.toml --broadband \
	    -o $(OUT)/buck.broadband.cir --report $(OUT)/buck.broadband.json
	$(PY) benchmarks/compare_broadband.py $(OUT)

test: simulators venv
	$(PY) -m pytest

lint: venv
	$(VENV)/bin/ruff check parasite geometry tests benchmarks
	$(VENV)/bin/mypy

# The fuzz suite at length: FUZZ_EXAMPLES per property, three properties (netlists,
# routes files, command lines), 10,200 examples in all by default; an example over
# 10 s fails. Exit codes and other counts: hypothesis's statistics at the end.
FUZZ_EXAMPLES ?= 3400
fuzz: venv
	PARASITE_FUZZ_EXAMPLES=$(FUZZ_EXAMPLES) $(PY) -m pytest tests/fuzz -q \
	    --hypothesis-show-statistics -p no:cacheprovider

bench: simulators venv
	$(PY) -m pip install --quiet -e '.[bench]'
	$(PY) benchmarks/run_all.py

clean:
	rm -rf build .pytest_cache .mypy_cache .ruff_cache
