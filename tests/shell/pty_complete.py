#!/usr/bin/python3
"""pty_complete.py: Tab completion of data frames at the prompt, typed
through a pseudo-terminal.

Checks: d:su<Tab> gives a frame method, d.ag<Tab> a column, d["ag<Tab> a
column with the string and bracket closed (also a name with a space),
d.age:su<Tab> a column method; and completion runs none of the user's
code: a graph whose "nodes" method was replaced, a table that borrows the
graph metatable, a frame whose listed methods were replaced and a table
with an __index function are all looked at without a call.

Standard library only.  Environment: B, the build directory.
"""
import os
import re
import shutil
import sys
import tempfile

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "lib"))
from ptyutil import PASSED, PROMPT, Session, fail, ok, sluice_exe, terminal_env

# Invented data for the demo of completion; the means below are plain
# arithmetic on it: age (34 + 51 + 47) / 3 = 44, yield (2.5 + 3 + 4) / 3 = 3.1666...
CSV = "age,yield,soil,plot id\n34,2.5,clay,a1\n51,3,loam,a2\n47,4,clay,a3\n"


def main():
    exe = sluice_exe()
    tmp = tempfile.mkdtemp(prefix="sluice-complete.")
    try:
        run(exe, tmp)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def tab(s, typed, want, why):
    """Type typed and a Tab; the line must then show want."""
    s.send(typed + "\t")
    s.expect(re.escape(want), why)


def run(exe, tmp):
    with open(os.path.join(tmp, "fields.csv"), "w") as f:
        f.write(CSV)
    env = terminal_env(tmp)
    s = Session([exe, "-q", "--no-log"], env, cwd=tmp, size=(24, 100), timeout=10.0)
    s.expect(re.escape(PROMPT), "the prompt appears")
    out = s.command('d = read_csv "fields.csv"', "reading the frame")
    if "error" in out:
        fail("reading the frame", out)

    tab(s, "d:su", "d:summary", "d:su<Tab> completes the method summary")
    out = s.command("()", "running d:summary()")
    if not re.search(r"\nage\s[^\n]*\s44\s", out):   # the mean of age
        fail("d:summary() runs after completion", out)
    ok("d:su<Tab> completes a frame method")

    tab(s, "d.ag", "d.age", "d.ag<Tab> completes the column age")
    out = s.command(":mean()", "running d.age:mean()")
    if not re.search(r"\n44(\.0)?\n", out):
        fail("d.age:mean() after completion prints 44", out)
    ok("d.ag<Tab> completes a column name")

    tab(s, 'd["yi', 'd["yield"]', 'd["yi<Tab> closes the string and the bracket')
    out = s.command(":mean()", 'running d["yield"]:mean()')
    if not re.search(r"\n3\.1666", out):
        fail('d["yield"]:mean() after completion', out)
    tab(s, "d['pl", "d['plot id']", "d['pl<Tab> completes a name with a space")
    out = s.command(":values()[3]", "running d['plot id']:values()[3]")
    if '"a3"' not in out and "a3" not in out:
        fail("d['plot id'] after completion", out)
    ok('d["yi<Tab> and d[\'pl<Tab> complete a column inside brackets')

    tab(s, "d.age:su", "d.age:sum", "d.age:su<Tab> completes a column method")
    out = s.command("()", "running d.age:sum()")
    if not re.search(r"\n132(\.0)?\n", out):
        fail("d.age:sum() after completion prints 132", out)
    ok("d.age:su<Tab> completes a column method")

    # Completion must not run user code: each of these would set a global.
    s.command('g = graph "zinc -> pears"', "a graph")
    s.command('getmetatable(g).__index.nodes = function() CALLED = "nodes" '
              'return {"zebra"} end', "replacing the nodes method")
    s.command('fake = setmetatable({nodes = function() CALLED = "fake" '
              'return {"zulu"} end}, getmetatable(g))', "a table with the graph metatable")
    s.command('getmetatable(d).methods.zap = function() CALLED = "methods" end',
              "a function among the listed frame methods")
    s.command('t = setmetatable({}, {__index = function() CALLED = "__index" end})',
              "a table with an __index function")
    tab(s, 'print("zi', '"zinc"', "node names come from the graph itself")
    s.send("\x03")
    s.expect(re.escape(PROMPT), "Ctrl-C drops the line")
    for k, typed in enumerate(('print("ze', 'print("zu', "t.x", "t:x", "d:za", "fake:n")):
        # the mark echoes only once Readline has dealt with both Tabs
        s.send(typed + "\t\tMARK%d" % k)
        s.expect("MARK%d" % k, "the line %s is echoed" % typed)
        s.send("\x03")
        s.expect(re.escape(PROMPT), "Ctrl-C drops the line " + typed)
    out = s.command("print(CALLED)", "did completion call user code")
    if not re.search(r"\nnil\n", out):
        fail("completion runs no user code", "CALLED is " + out)
    ok("completion calls no method or __index function of the user's")

    s.send("\x04")
    code = s.wait_exit("Ctrl-D should leave")
    if code != 0:
        fail("Ctrl-D leaves with status 0", "the status was %r" % code)
    print("%d passed, 0 failed" % len(PASSED))


if __name__ == "__main__":
    main()
