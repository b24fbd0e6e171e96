#!/usr/bin/env bash
# cli/basics.sh -- version, help, unknown command and option handling.
# Conventions checked: exit 0/1/2 as DESIGN.md states; usage errors on one line.
set -u
. "$(dirname "$0")/lib.sh"

run "$VECSIFT" --version
expect_status 0; expect_out '^vecsift [0-9]+\.[0-9]+\.[0-9]+$'

run "$VECSIFT" help
expect_status 0; expect_out 'usage: vecsift <command>'

run "$VECSIFT"
expect_status 0; expect_out 'commands:'

run "$VECSIFT" frobnicate
expect_status 2; expect_err_lines 1; expect_err "'frobnicate' is not a command"

run "$VECSIFT" --frob
expect_status 2; expect_err_lines 1

finish
