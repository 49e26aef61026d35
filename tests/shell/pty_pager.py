#!/usr/bin/python3
"""pty_pager.py: help() at the prompt goes through the terminal's pager;
nothing else does.

A fake pager (a shell script named by PAGER) appends what it reads to a
file and says "FAKE-PAGER-DONE" on the terminal.  Checks:
  - help() at the prompt runs the pager once, the pager gets the whole
    overview (byte for byte what `sluice -e "help()"` prints), and the
    terminal does not get it besides;
  - the session log records the overview as printed, so that replaying
    the log matches, and the replay never starts the pager;
  - help{pager = false}, help "name" and a misspelled option do not page;
  - a script on a terminal (sluice script.lua) and a run whose output is
    not a terminal (sluice -e) never page;
  - a pager that cannot be started: the text comes to the terminal with a
    warning naming the pager.

Standard library only.  Environment: B, the build directory.
"""
import os
import re
import shutil
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "lib"))
from ptyutil import PASSED, PROMPT, Session, fail, ok, sluice_exe, terminal_env

MARK = "FAKE-PAGER-DONE"
TOPICS = "functions by topic"   # the first line of help()


def main():
    exe = sluice_exe()
    tmp = tempfile.mkdtemp(prefix="sluice-pager.")
    try:
        run(exe, tmp)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def read(path):
    try:
        with open(path, encoding="utf-8") as f:
            return f.read()
    except FileNotFoundError:
        return ""


def fake_pager(tmp):
    """The fake pager script and the file it records into."""
    record = os.path.join(tmp, "paged.txt")
    script = os.path.join(tmp, "fake-pager")
    with open(script, "w") as f:
        f.write("#!/bin/sh\n"
                "# a pager for the test: keep what it is given, say it ran\n"
                "cat >> '%s'\n"
                "printf '%%s\\n' '----end of one paging----' >> '%s'\n"
                "echo %s\n" % (record, record, MARK))
    os.chmod(script, 0o755)
    return script, record


def run(exe, tmp):
    env = terminal_env(tmp)
    pager, record = fake_pager(tmp)
    env["PAGER"] = pager
    end = "----end of one paging----\n"

    # what help() prints where there is no terminal: the reference text,
    # and a run that must not page
    plain = subprocess.run([exe, "-e", "help()"], env=env, cwd=tmp,
                           capture_output=True, text=True, timeout=30)
    if plain.returncode != 0 or TOPICS not in plain.stdout:
        fail("help() prints when output is not a terminal", plain.stdout + plain.stderr)
    if read(record) != "":
        fail("a run whose output is not a terminal does not page", read(record))
    ok("sluice -e 'help()' with output to a pipe prints and never pages")

    log = os.path.join(tmp, "session.lua")
    s = Session([exe, "-q", "--log", log], env, cwd=tmp, size=(24, 100), timeout=15.0)
    s.expect(re.escape(PROMPT), "the prompt appears")
    out = s.command("help()", "help() at the prompt")
    if MARK not in out:
        fail("help() at the prompt runs the pager", out)
    if TOPICS in out:
        fail("the paged text does not also go to the terminal", out)
    got = read(record)
    if got != plain.stdout + end:
        fail("the pager gets the whole overview, exactly as printed",
             "expected %d characters, the pager got %d:\n%s"
             % (len(plain.stdout), len(got) - len(end), got[-600:]))
    ok("help() at the prompt pages the whole overview once, and only there")

    out = s.command("help{pager = false}", "help{pager = false}")
    if TOPICS not in out or MARK in out or read(record) != got:
        fail("help{pager = false} prints and does not page", out)
    out = s.command('help "g:parents"', "help of one function")
    if "g:parents(v)" not in out or MARK in out or read(record) != got:
        fail('help "g:parents" prints and does not page', out)
    out = s.command("help{pagr = false}", "a misspelled option")
    if "did you mean 'pager'?" not in out or read(record) != got:
        fail("help{pagr = false} is refused with a suggestion", out)
    ok("help{pager = false}, help \"name\" and a bad option do not page")

    s.send("\x04")
    if s.wait_exit("Ctrl-D leaves") != 0:
        fail("the session ends with status 0", s.text()[-400:])
    logged = read(log)
    lines = [l[4:] for l in logged.split("\nhelp()\n", 1)[-1].split("\n")
             if l.startswith("--|")]   # "--| text", or "--|" for an empty line
    if "\n".join(lines[:len(plain.stdout.splitlines())]) != plain.stdout.rstrip("\n"):
        fail("the log records the paged overview as printed", logged[:1200])
    ok("the session log records the text that went to the pager")

    # the replay runs help() with no terminal, in a child: never the pager
    rep = subprocess.run([exe, "--replay", log], env=env, cwd=tmp,
                         capture_output=True, text=True, timeout=120)
    if "without --trust" in rep.stdout + rep.stderr:   # no sandbox on this kernel
        rep = subprocess.run([exe, "--replay", log, "--trust"], env=env, cwd=tmp,
                             capture_output=True, text=True, timeout=120)
    if not re.search(r"\b0 differed", rep.stdout) or "in 1: ok" not in rep.stdout:
        fail("the replay of a paged help() matches", rep.stdout + rep.stderr)
    if read(record) != got:
        fail("a replay never starts the pager", read(record))
    ok("the log replays with help() matching, and the replay does not page")

    script = os.path.join(tmp, "script.lua")
    with open(script, "w") as f:
        f.write("help()\nprint('script done')\n")
    sc = Session([exe, "--no-log", script], env, cwd=tmp, size=(24, 100), timeout=15.0)
    sc.expect("script done", "the script runs to its end")
    if sc.wait_exit("the script ends") != 0 or TOPICS not in sc.text() or MARK in sc.text():
        fail("a script on a terminal prints help() and does not page", sc.text()[-600:])
    if read(record) != got:
        fail("a script on a terminal does not page", read(record))
    ok("a script run on a terminal prints help() without the pager")

    env["PAGER"] = os.path.join(tmp, "no-such-pager")
    s = Session([exe, "-q", "--no-log"], env, cwd=tmp, size=(24, 100), timeout=15.0)
    s.expect(re.escape(PROMPT), "the prompt appears")
    out = s.command("help()", "help() with a pager that cannot start")
    if TOPICS not in out or "no-such-pager" not in out or "could not be started" not in out:
        fail("a pager that cannot start: the text and a warning", out)
    out = s.command("print(1 + 1)", "the session goes on")
    if not re.search(r"\n2\n", out):
        fail("the session goes on after a failed pager", out)
    s.send("\x04")
    s.wait_exit("Ctrl-D leaves")
    ok("a pager that cannot be started: the text comes with a warning")
    print("%d passed, 0 failed" % len(PASSED))


if __name__ == "__main__":
    main()
