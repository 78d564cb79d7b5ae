# The two set-up commands of the README. Each creates .venv and installs what it needs.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
OUT    := demo-output

.PHONY: demo test install bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(VENV)/.installed: $(BIN)/python pyproject.toml
	$(BIN)/python -m pip install --quiet -e .
	touch $@

$(VENV)/.installed-test: $(BIN)/python pyproject.toml
	$(BIN)/python -m pip install --quiet -e ".[test]"
	touch $@ $(VENV)/.installed

install: $(VENV)/.installed

# Run the main job on bundled defaults (invented example filters).
demo: $(VENV)/.installed
	mkdir -p $(OUT)
	$(BIN)/cvdfilter list filters
	$(BIN)/cvdfilter inspect larkhill-notch-575 larkhill-double-notch larkhill-rose-tint larkhill-grey-reference
	$(BIN)/cvdfilter inspect larkhill-notch-575 larkhill-double-notch larkhill-rose-tint larkhill-grey-reference \
		--format json --output $(OUT)/inspect.json
	$(BIN)/cvdfilter inspect-observer normal deuteranomalous:shift=8 protanope tritanope --white D65
	$(BIN)/cvdfilter inspect-observer normal:age=70,field=10 deuteranomalous:severity=0.6,model=machado2009 \
		protanomalous:shift=8 deuteranope --format json --output $(OUT)/observers.json
	$(BIN)/cvdfilter score larkhill-notch-575 larkhill-double-notch larkhill-rose-tint larkhill-grey-reference
	$(BIN)/cvdfilter score larkhill-notch-575 larkhill-double-notch larkhill-rose-tint larkhill-grey-reference \
		--format json --output $(OUT)/scorecard.json
	$(BIN)/cvdfilter score larkhill-notch-575 larkhill-double-notch larkhill-rose-tint larkhill-grey-reference \
		--format markdown --output $(OUT)/scorecard.md
	$(BIN)/cvdfilter tasks larkhill-notch-575 larkhill-double-notch larkhill-rose-tint larkhill-grey-reference --export-stimuli $(OUT)/task-stimuli
	$(BIN)/cvdfilter render test_images/tabletop.png test_images/dots_deutan.png test_images/tabletop_cube.npz \
		--filter larkhill-notch-575 --observer deuteranope --panel --force --out $(OUT)/render
	$(BIN)/cvdfilter report larkhill-notch-575 larkhill-double-notch larkhill-rose-tint larkhill-grey-reference \
		-o $(OUT)/report.html
	$(BIN)/cvdfilter report larkhill-notch-575 larkhill-double-notch larkhill-rose-tint larkhill-grey-reference \
		-o $(OUT)/report.md
	$(BIN)/cvdfilter figure spectrum larkhill-notch-575 larkhill-double-notch --observer normal \
		--observer deuteranomalous -o $(OUT)/figures/spectrum.pdf
	$(BIN)/cvdfilter figure chromaticity larkhill-notch-575 --observer deuteranope -o $(OUT)/figures/chromaticity.pdf
	$(BIN)/cvdfilter figure gains larkhill-notch-575 larkhill-double-notch larkhill-rose-tint larkhill-grey-reference \
		-o $(OUT)/figures/gains.pdf
	$(BIN)/cvdfilter figure swatches larkhill-notch-575 --observer deuteranope -o $(OUT)/figures/swatches.svg
	$(BIN)/cvdfilter figure images larkhill-notch-575 --observer deuteranope -o $(OUT)/figures/images.png
	$(BIN)/cvdfilter figure sweep "notch:center=530..620/5,fwhm=30,depth=0.8" --width double \
		-o $(OUT)/figures/sweep.pdf
	$(BIN)/cvdfilter design --observer deuteranomalous --maximise red_green_gain --maximise luminous_transmittance \
		--require road_use.suitable --require "white_shift<=0.01" --family notch:k=2 --budget 1000 --seed 1 \
		--metrics core -o $(OUT)/design

test: $(VENV)/.installed-test
	$(BIN)/ruff check .
	$(BIN)/mypy
	$(BIN)/python -m pytest -q

bench: $(VENV)/.installed
	$(BIN)/python benchmarks/startup.py

clean:
	rm -rf $(VENV) $(OUT) .pytest_cache
