# 00_main.sh - global options and exit codes of the dispatcher.
CASE="--help"; run "$FF" --help
expect_rc 0; expect_out '^usage: frostfit'; expect_out 'exit codes'
CASE="--version"; run "$FF" --version
expect_rc 0; expect_out '^frostfit [0-9]+\.[0-9]+'
CASE="no command"; run "$FF"
expect_rc 1; expect_no_out
CASE="unknown command"; run "$FF" frobnicate
expect_rc 1; expect_err "^frostfit: unknown command 'frobnicate'"; expect_no_out
