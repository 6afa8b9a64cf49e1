# mk/bench.mk - speed benchmark helpers, included by the Makefile.
#
#   make bench-speed        (Makefile) scripts/bench-speed.sh $(BIN)
#   make bench-speed-data   only generate the synthetic files in bench-data/
#   make bench-numparse     ns per number cell, strtod against ff_parse_double
# See docs/performance.md.

bench-speed-data:
	BUILD=$(BUILD) CC="$(CC)" scripts/bench-speed.sh --data-only

bench-numparse: $(BUILD)/bench/numparse
	$(BUILD)/bench/numparse

.PHONY: bench-speed-data bench-numparse
