#!/usr/bin/env python3
# tests/ext/docs_check.py -- the user documentation covers what the program
# offers: every command 'vecsift help' lists, every verb 'vecsift help
# vectors' lists and every option 'vecsift help CMD' (and 'vecsift help
# vectors VERB') lists appears in README.md's command reference under that
# command's heading and in the manual page vecsift.1 under that command's
# section.  Adding a command or an option without documenting it fails here.
#
# Also: vecsift.1 is what tools/make-man writes from the current binary (so
# it cannot drift from the code); groff reads it without a warning (groff's
# -ww -z lint, when groff is installed: Debian package groff-base); and the
# checker itself finds an option removed from a copy of each document (so
# the check can fail).  The expectations are the task's; the roff escapes
# (\- for a hyphen-minus, \f font changes) are groff's man macros, groff_man(7).
# Prints each check; ends with "N passed, N failed"; exits 1 on any failure.

import os
import re
import shlex
import shutil
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from tally import check, finish  # noqa: E402

SRC = os.environ.get('SRCDIR', os.getcwd())
VECSIFT = os.path.abspath(os.environ.get('VECSIFT', os.path.join(SRC, 'build', 'vecsift')))


def help_of(*args):
    p = subprocess.run([VECSIFT, 'help'] + list(args), stdout=subprocess.PIPE,
                       stderr=subprocess.PIPE, text=True)
    if p.returncode != 0:
        raise SystemExit('vecsift help %s: status %d: %s'
                         % (' '.join(args), p.returncode, p.stderr))
    return p.stdout


def listed(text, heading):
    """Names listed under 'commands:' or 'verbs:'."""
    names, inside = [], False
    for ln in text.splitlines():
        if ln.strip() == heading:
            inside = True
        elif inside and ln.startswith('  ') and ln.strip():
            names.append(ln.split()[0])
        elif inside:
            inside = False
    return names


def options_of(text):
    """Option names on the option lines of a help text: '--long' and '-s'."""
    opts = []
    for ln in text.splitlines():
        m = re.match(r'^\s+(-[A-Za-z]), (--[A-Za-z][\w-]*)', ln)
        if m:
            opts += [m.group(1), m.group(2)]
            continue
        m = re.match(r'^\s+(--[A-Za-z][\w-]*)', ln)
        if m:
            opts.append(m.group(1))
    return opts


def catalogue():
    """[(title, [options])] for every command and vectors verb."""
    out = []
    for cmd in listed(help_of(), 'commands:'):
        text = help_of(cmd)
        out.append(('vecsift ' + cmd, options_of(text)))
        for verb in listed(text, 'verbs:'):
            out.append(('vecsift %s %s' % (cmd, verb), options_of(help_of(cmd, verb))))
    return out


def readme_sections(readme):
    """Title -> text of each '### vecsift ...' / '#### vecsift ...' section
    of the command reference (between the reference markers)."""
    m = re.search(r'^<!-- reference -->\n(.*?)^<!-- end reference -->$', readme,
                  re.M | re.S)
    if not m:
        return None
    parts = re.split(r'^#{3,4} (vecsift [^\n]*)\n', m.group(1), flags=re.M)
    return {parts[i].strip(): parts[i + 1] for i in range(1, len(parts) - 1, 2)}


def man_sections(man):
    """Title -> text of each '.SS "vecsift ..."' section, roff escapes undone."""
    plain = man.replace('\\-', '-')
    plain = re.sub(r'\\f[BIRP]', '', plain)
    parts = re.split(r'^\.SS "(vecsift [^"]*)"\n', plain, flags=re.M)
    return {parts[i]: parts[i + 1] for i in range(1, len(parts) - 1, 2)}


def man_examples(man):
    """The commands in the .nf blocks of the EXAMPLES section, with roff
    escapes undone and continued lines joined."""
    m = re.search(r'^\.SH EXAMPLES\n(.*?)^\.SH ', man, re.M | re.S)
    cmds = []
    for block in re.findall(r'^\.nf\n(.*?)^\.fi$', m.group(1) if m else '', re.M | re.S):
        text = block.replace('\\-', '-').replace('\\e', '\\')
        text = re.sub(r'\s*\\\n\s*', ' ', text)
        cmds += [ln.strip() for ln in text.splitlines() if ln.strip().startswith('vecsift ')]
    return cmds


def has_option(section, opt):
    return re.search(r'(?<![\w-])' + re.escape(opt) + r'(?![\w-])', section) is not None


def gaps(cat, sections):
    """What of the catalogue a document's sections lack."""
    missing = []
    for title, opts in cat:
        if title not in sections:
            missing.append(title)
            continue
        missing += ['%s %s' % (title, o) for o in opts if not has_option(sections[title], o)]
    return missing


def main():
    cat = catalogue()
    check(len(cat) >= 6 and sum(len(o) for _, o in cat) >= 50,
          'vecsift help lists %d commands and verbs with %d option names'
          % (len(cat), sum(len(o) for _, o in cat)))
    with open(os.path.join(SRC, 'README.md'), encoding='utf-8') as f:
        readme = f.read()
    with open(os.path.join(SRC, 'vecsift.1'), encoding='utf-8') as f:
        man = f.read()

    rs = readme_sections(readme)
    check(rs is not None, 'README.md has a command reference between markers')
    rs = rs or {}
    miss = gaps(cat, rs)
    check(not miss, 'README.md reference documents every command, verb and option'
          + ('; missing: ' + ', '.join(miss) if miss else ''))
    ms = man_sections(man)
    miss = gaps(cat, ms)
    check(not miss, 'vecsift.1 documents every command, verb and option'
          + ('; missing: ' + ', '.join(miss) if miss else ''))

    # The checker fails on a document with one option taken out.
    title, opts = next((t, o) for t, o in cat if o)
    gone = opts[-1]
    doctored = dict(rs)
    doctored[title] = re.sub(r'(?<![\w-])' + re.escape(gone) + r'(?![\w-])', '',
                             doctored.get(title, ''))
    check(gaps(cat, doctored) == ['%s %s' % (title, gone)],
          'the check notices %s %s removed from the README reference' % (title, gone))
    doctored = dict(ms)
    doctored.pop(title, None)
    check(title in gaps(cat, doctored),
          'the check notices the section %s removed from vecsift.1' % title)

    # vecsift.1 is exactly what tools/make-man writes from this binary.
    p = subprocess.run([sys.executable, os.path.join(SRC, 'tools', 'make-man'), VECSIFT],
                       stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    check(p.returncode == 0 and p.stdout == man,
          'vecsift.1 matches tools/make-man output (rerun: tools/make-man > vecsift.1)'
          + (': ' + p.stderr.strip() if p.returncode else ''))

    # Every example in the man page's EXAMPLES section runs (exit status 0)
    # in a fresh directory holding copies of the demo inbox's files.
    examples = man_examples(man)
    check(len(examples) >= 4, 'vecsift.1 has %d example commands' % len(examples))
    with tempfile.TemporaryDirectory() as tmp:
        for name in ('labelled.csv', 'unlabelled.csv', 'incoming.csv'):
            shutil.copy(os.path.join(SRC, 'datasets', 'inbox', name), tmp)
        shutil.copytree(os.path.join(SRC, 'datasets'), os.path.join(tmp, 'datasets'))
        for cmd in examples:
            argv = shlex.split(cmd)
            argv[0] = VECSIFT
            r = subprocess.run(argv + ['--quiet'], cwd=tmp, stdout=subprocess.DEVNULL,
                               stderr=subprocess.PIPE, text=True)
            check(r.returncode == 0, 'man page example runs: %s%s'
                  % (cmd, '' if r.returncode == 0 else ' -> %d %s' % (r.returncode, r.stderr.strip())))

    groff = shutil.which('groff')
    if groff:
        g = subprocess.run([groff, '-man', '-ww', '-z', os.path.join(SRC, 'vecsift.1')],
                           stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
        check(g.returncode == 0 and g.stderr == '',
              'groff -man -ww reads vecsift.1 without warnings' +
              (': ' + g.stderr.strip() if g.stderr else ''))
    else:
        print('skip groff lint: groff is not installed (Debian package groff-base)')
    return finish()


if __name__ == '__main__':
    sys.exit(main())
