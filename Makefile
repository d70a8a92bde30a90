# Slopewise build and test entry points. `make test` is what CI runs
# (.ci/run calls it); it installs what it needs on a fresh Debian machine.

GO ?= go
# R and sandwich: the engine's independent check; LibreOffice: workbook
# interop and the printed results sheet, with Carlito (Calibri's metrics,
# so that LibreOffice lays out the sheet's columns as Excel does);
# gcc, GL and X11 headers: building the window (cgo).
GUI_PACKAGES := gcc libgl1-mesa-dev xorg-dev
APT_PACKAGES := r-base-core r-cran-sandwich libreoffice-calc-nogui fonts-crosextra-carlito $(GUI_PACKAGES)

.PHONY: test deps build-deps build demo screenshots go-test crosscheck-r bench vet size-study interop-corpus attack wine-tests save-trials

test: deps vet go-test wine-tests attack fuzz dist-check

# System packages: R and sandwich are the independent check of the engine
# (testdata/r/). Installed only when missing; needs root or sudo.
deps:
	scripts/apt-install.sh $(APT_PACKAGES)
	$(GO) mod download

# What building the program needs: the GL and X11 headers, Go modules.
build-deps:
	scripts/apt-install.sh $(GUI_PACKAGES)
	$(GO) mod download

build: build-deps
	$(GO) build -o bin/slopewise ./cmd/app

# The demo: write the invented job-coaching workbooks (the pilot and its
# roll-out) and analyze them, leaving annotated workbooks in demo-output/.
demo: build
	rm -rf demo-output
	./bin/slopewise demo demo-output
	./bin/slopewise analyze demo-output/slopewise-demo.xlsx \
	  --outcome earnings_6m --treatment coached --moderator region \
	  --controls age,baseline_score --cluster site --randomized --planned
	./bin/slopewise analyze demo-output/slopewise-demo-rollout.xlsx \
	  --outcome earnings --treatment programme --control-arm none --period year \
	  --after 2024 --unit person_id --unit-effects --moderator region --randomized
	@echo
	@echo "Open demo-output/slopewise-demo.xlsx and demo-output/slopewise-demo-rollout.xlsx and look at the sheet \"Results\"."

# Pictures of every screen for the README, from a real window under Xvfb.
screenshots: build
	scripts/screenshots.sh bin/slopewise docs/screenshots

vet:
	$(GO) vet ./...
	@test -z "$$(gofmt -l .)" || { echo "gofmt would change:"; gofmt -l .; exit 1; }

go-test:
	$(GO) test ./...

# The reading and saving side, the pipeline and the headless command's
# tests as Windows programs under Wine (the save's ReplaceFileW exchange,
# renames over open files, Windows paths); about two minutes with Wine's
# install. Part of test.
wine-tests:
	packaging/wine-tests.sh

# The save's fault trials as a person meets them (issue 13): two runs at
# once, another program's save at a random moment, a kill at a random
# moment, on a 7 MB workbook. Minutes; not part of test.
save-trials: build
	scripts/save-trials.py bin/slopewise pairs 12
	scripts/save-trials.py bin/slopewise edits 30
	scripts/save-trials.py bin/slopewise kills 40

# Rerun R on the reference cases and compare with the engine live.
crosscheck-r:
	SLOPEWISE_LIVE_R=1 $(GO) test ./internal/estimate -run 'TestAgainstR|TestBootstrapAgainstR|TestLinearityAgainstR|TestEquivalenceAgainstR|TestDiDAgainstR|TestArmsAgainstR' -v

bench:
	$(GO) test ./internal/estimate -run '^$$' -bench . -benchmem -benchtime 3x

# Remake testdata/interop: the same invented data written by other workbook
# writers (openpyxl, xlsxwriter, LibreOffice, Gnumeric, exceljs, SheetJS),
# with a manifest of expected fits from statsmodels. Not part of test; the
# script names what it needs and installs nothing (testdata/interop/README.md).
interop-corpus:
	scripts/interop/make_corpus.sh

# The size studies of the wild cluster bootstrap, 2,000 simulated data sets
# a row under a true null: the difference of two groups with 8 clusters, and
# the joint tests (the straight-line check with 8 to 60 clusters, 6 groups
# with 6 to 40); prints the rejection rates at 5% of CR1 and of the
# bootstrap with their Monte Carlo standard errors. About seven minutes on
# two cores: too slow for every test run.
size-study:
	$(GO) test ./internal/estimate -run TestSizeStudy -size-study -v -timeout 30m

# The attack suite: hostile and odd input files (zip bombs, gigabyte
# cells, sheets past Excel's rows and columns, a workbook without styles)
# given to the built program, each run watched for time (60 s) and memory
# (killed past 2 GiB); prints a table of what happened, also written to
# the file named by SLOPEWISE_ATTACK_REPORT if set. Linux; about a
# minute, so part of test.
attack:
	$(GO) test ./internal/io/workbook -run '^TestAttack$$' -attack -v -timeout 30m

# Fuzz the workbook and text readers briefly; a failing input is saved
# under the target's package, in testdata/fuzz (internal/io/workbook for
# the whole reading, internal/io/xlsx for the fast sheet reader,
# internal/io/delimited for the text scanner). Each target runs a fixed number
# of inputs (about 10-20 s on a quiet two-core machine), not a fixed time: a
# duration budget makes Go 1.26's fuzz coordinator fail now and then with a
# bare "context deadline exceeded" at the end of the window when the machine
# is loaded (golang/go#75804, fixed in Go 1.27), with nothing found.
# Shrinking a new input is bounded by count too (it was 5 s of wall clock
# per input, which stalled the run on the 38 KB workbook seeds).
WORKBOOK_FUZZ := workbook:FuzzReadText:600 workbook:FuzzReadWorkbook:5000 workbook:FuzzSniff:6000 xlsx:FuzzFastSheet:3000 delimited:FuzzScanner:10000
fuzz:
	@for ptn in $(WORKBOOK_FUZZ); do \
	  p=$${ptn%%:*}; tn=$${ptn#*:}; t=$${tn%%:*}; n=$${tn##*:}; \
	  $(GO) test ./internal/io/$$p -run '^$$' -fuzz "^$$t$$" -fuzztime "$${n}x" -fuzzminimizetime 200x || exit 1; \
	done

# The packages for evaluators, into dist/: the Windows programs (cross-
# compiled with mingw-w64) in a zip, the Linux tarball with its desktop
# entry, icons and install scripts, and SHA256SUMS. The version is
# FyneApp.toml's. See packaging/ and, for macOS, packaging/macos/README.md.
DIST_PACKAGES := gcc-mingw-w64-x86-64 zip unzip desktop-file-utils
.PHONY: dist dist-check licenses
dist: build-deps
	scripts/apt-install.sh $(DIST_PACKAGES)
	GO=$(GO) packaging/dist.sh

# Build the packages and check them (part of make test: CI builds both).
dist-check: dist
	packaging/check.sh

# Rewrite THIRD_PARTY_LICENSES after a dependency changes (a test fails
# until it is current).
licenses:
	$(GO) run ./scripts/thirdparty -o THIRD_PARTY_LICENSES
