# tests/ext/tally.py -- the pass/fail bookkeeping shared by the report
# checks (report_page_check.py, ../cli/report_screenshot.py): one line per
# check, then "N passed, N failed" as every vecsift test script ends.

counts = {'passed': 0, 'failed': 0}


def check(ok, what):
    """Record and print one check; returns whether it passed."""
    counts['passed' if ok else 'failed'] += 1
    print(('ok   ' if ok else 'FAIL ') + what)
    return bool(ok)


def finish():
    """Print the summary line; returns the exit status (1 on any failure)."""
    print('%d passed, %d failed' % (counts['passed'], counts['failed']))
    return 1 if counts['failed'] else 0
