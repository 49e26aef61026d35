#!/usr/bin/python3
"""pty_session.py: drive the interactive sluice prompt through a
pseudo-terminal, as a person at a keyboard would.

Checks, in one session: a graph can be made; an error prints a message and
the session goes on with its variables; Ctrl-C at the prompt drops the line
and a pending multi-line chunk; Ctrl-C stops a runaway loop; Tab completes
global names, fields, methods and node names; a chunk over several lines
waits for its end; Ctrl-D leaves with status 0; the history file is written.

Standard library only.  Environment: B, the build directory.
"""
import os
import re
import shutil
import sys
import tempfile
import time

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "lib"))
from ptyutil import MORE, PASSED, PROMPT, Session, fail, ok, sluice_exe, terminal_env


def main():
    exe = sluice_exe()
    tmp = tempfile.mkdtemp(prefix="sluice-pty.")
    try:
        run(exe, tmp)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def run(exe, tmp):
    state = os.path.join(tmp, "state")
    env = terminal_env(tmp)
    s = Session([exe, "-q", "--no-log"], env, size=(24, 100), timeout=10.0)

    s.expect(re.escape(PROMPT), "the prompt appears")
    ok("the prompt appears")

    s.command("x = 41", "a plain assignment")
    out = s.command('g = graph "orchard -> pears"', "making a graph")
    if "error" in out:
        fail("making a graph", "it printed: " + out)
    out = s.command("print(type(g))", "the graph is kept")
    if "userdata" not in out and "table" not in out:
        fail("the graph is kept", "print(type(g)) printed: " + out)
    ok("a graph is made and kept in g")

    out = s.command('graph "orchard -> "', "a notation error")
    if "error: " not in out or "^" not in out:
        fail("a notation error prints a message and a caret", "it printed: " + out)
    out = s.command("nil + 1", "a runtime error")
    if "error: " not in out or "arithmetic" not in out:
        fail("a runtime error prints one message", "it printed: " + out)
    out = s.command("x + 1", "the session goes on after errors")
    if not re.search(r"\n42\n", out):
        fail("the session goes on after errors", "x + 1 printed: " + out)
    out = s.command("g:nodes()", "the graph survives errors")
    if "orchard" not in out or "pears" not in out:
        fail("the graph survives errors", "g:nodes() printed: " + out)
    ok("errors print a message; variables and graphs survive them")

    mark = s.seen
    s.send("print('half a line'")
    s.expect(re.escape("print('half a line'"), "the half line is echoed")
    s.send("\x03")
    s.expect(re.escape(PROMPT), "Ctrl-C at the prompt shows a fresh prompt")
    out = s.command('print("after" .. "-ctrl-c")', "a command after Ctrl-C")
    if "after-ctrl-c" not in out:
        fail("Ctrl-C at the prompt drops the line", "the next command printed: "
             + s.text()[mark:])
    s.command("for i = 1, 3 do", "a pending chunk", then=MORE)
    s.send("\x03")
    s.expect(re.escape(PROMPT), "Ctrl-C drops a pending chunk")
    out = s.command("x + 1", "a command after dropping a chunk")
    if not re.search(r"\n42\n", out):
        fail("Ctrl-C drops a pending chunk", "x + 1 printed: " + out)
    ok("Ctrl-C at the prompt drops the line and a pending chunk")

    s.send("while true do end\r")
    s.expect(re.escape("while true do end"), "the loop is echoed")
    time.sleep(0.5)
    s.send("\x03")
    s.expect("interrupted", "Ctrl-C stops a running loop")
    s.expect(re.escape(PROMPT), "the prompt comes back after Ctrl-C")
    out = s.command("x + 1", "a command after stopping the loop")
    if not re.search(r"\n42\n", out):
        fail("the session goes on after Ctrl-C", "x + 1 printed: " + out)
    ok("Ctrl-C during a computation returns to the prompt")

    s.send("pri\t")
    s.expect(r"print", "Tab completes 'pri' to 'print'")
    out = s.command("(6 * 9)", "running the completed line")
    if not re.search(r"\n54\n", out):
        fail("Tab completes a global name", "print(6 * 9) printed: " + out)
    s.send("string.fo\t")
    s.expect(r"string\.format", "Tab completes a field after '.'")
    out = s.command('("%d", 5 * 11)', "running the completed field")
    if not re.search(r"\n55\n", out):
        fail("Tab completes a field", "string.format printed: " + out)
    s.send("g:nod\t")
    s.expect(r"g:nodes", "Tab completes a method after ':'")
    out = s.command("()", "running the completed method")
    if "orchard" not in out:
        fail("Tab completes a method", "g:nodes() printed: " + out)
    s.send('print(("pea\t')
    s.expect(r'"pears"', "Tab completes a node name inside a string")
    out = s.command("):upper())", "running the completed node name")
    if "PEARS" not in out:
        fail("Tab completes a node name", "the line printed: " + out)
    ok("Tab completes globals, fields, methods and node names")

    s.command("for i = 1, 2 do", "the first line of a loop", then=MORE)
    s.command("print('row ' .. i)", "the body of a loop", then=MORE)
    out = s.command("end", "the end of a loop")
    if "row 1" not in out or "row 2" not in out:
        fail("a chunk over several lines runs once complete", "it printed: " + out)
    ok("a chunk over several lines waits for its end, then runs")

    s.send("\x04")
    code = s.wait_exit("Ctrl-D should leave")
    if code != 0:
        fail("Ctrl-D leaves with status 0", "the status was %r" % code)
    ok("Ctrl-D on an empty line leaves with status 0")

    path = os.path.join(state, "sluice", "history")
    try:
        with open(path, encoding="utf-8") as f:
            hist = f.read()
    except OSError as e:
        fail("the history file is written", str(e))
    for entry in ("x = 41", 'g = graph "orchard -> pears"', "print('row ' .. i)"):
        if entry not in hist:
            fail("the history file is written", "%r is missing from %s:\n%s"
                 % (entry, path, hist))
    ok("the history file holds the session's inputs")
    print("%d passed, 0 failed" % len(PASSED))


if __name__ == "__main__":
    main()
