#!/usr/bin/python3
"""log_session.py: the session log, through a pseudo-terminal.

Checks: an interactive session (with --log) writes a log that says where it
goes, holds every input and what it printed, and the data file it read;
sluice --replay matches it; a log whose seeded bootstrap is switched from
1 thread to 2 still matches bit for bit; changing one recorded number makes
replay report that command; changing one byte of the data file makes replay
report the file; after SIGKILL the log holds every finished command and
still parses as Lua.

Standard library only.  Environment: B, the build directory.
"""
import os
import re
import shutil
import signal
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "lib"))
from ptyutil import PASSED, PROMPT, Session, fail, ok, sluice_exe, terminal_env

TIMEOUT = 20.0


def replay(exe, log, cwd, *extra):
    p = subprocess.run([exe, "--replay", log] + list(extra), cwd=cwd,
                       capture_output=True, text=True, timeout=120)
    return p.returncode, p.stdout + p.stderr


def parses(exe, log, cwd):
    p = subprocess.run([exe, "-e", "assert(loadfile(%r))" % log], cwd=cwd,
                       capture_output=True, text=True, timeout=60)
    return p.returncode == 0, p.stdout + p.stderr


SESSION = [
    ("x = 41", None),
    ("x + 1", r"\n42\n"),
    ('print("rows", 6 * 7)', r"rows\t42"),
    ('plots = read_csv "plots.csv"', None),
    ("#plots", r"\n8\n"),
    ('g = graph "slope -> mulch -> harvest; slope -> harvest"', None),
    ('m = sem(g, {["slope -> mulch"] = 0.5, ["mulch -> harvest"] = 2, ["slope -> harvest"] = 1})', None),
    ("d = m:simulate(200, {seed = 7})", None),
    ('r = estimate{data = d, treatment = "mulch", outcome = "harvest", graph = g, boot = 50, seed = 3, threads = 1}',
     None),
    ('string.format("%.17g %.17g %.17g", r.estimate, r.se, r.lo)', r"\n\d\.\d+ 0\.\d+ \d\.\d+\n"),
    ("nil + 1", r"error: .*arithmetic"),
    ("for i = 1, 2 do print('row ' .. i) end", r"row 2"),
]


def main():
    exe = sluice_exe()
    data = os.path.abspath("tests/data/orchard.csv")
    tmp = tempfile.mkdtemp(prefix="sluice-log.")
    try:
        run(exe, data, tmp)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    print("%d passed, 0 failed" % len(PASSED))


def run(exe, data, tmp):
    shutil.copy(data, os.path.join(tmp, "plots.csv"))
    env = terminal_env(tmp)
    log = "session.lua"
    logpath = os.path.join(tmp, log)

    s = Session([exe, "-q", "--log", log], env, tmp, timeout=TIMEOUT)
    s.expect(r"session log: session\.lua", "the shell says where the log goes")
    s.expect(re.escape(PROMPT), "the prompt appears")
    ok("the shell says where the log goes")
    for line, want in SESSION:
        out = s.command(line, line)
        if want and not re.search(want, out):
            fail("the session runs", "%r printed:\n%s" % (line, out))
    s.send("\x04")
    if s.wait_exit("the session ends") != 0:
        fail("Ctrl-D leaves", "non-zero status")
    text = open(logpath, encoding="utf-8").read()
    for want in ("--@ sluice ", "--@ started ", "--@ in 1 (1 line)\nx = 41\n", "show(x + 1)\n--| 42\n",
                 "--| rows\t42\n", "--@ data plots.csv 177 ", "--| error: ",
                 "--| row 1\n--| row 2\n"):
        if want not in text:
            fail("the log holds the session", "%r is missing from the log:\n%s" % (want, text))
    ok("the log holds every input, its output and the data file read")
    good, why = parses(exe, log, tmp)
    if not good:
        fail("the log is a Lua script", why)
    ok("the log parses as Lua")

    n = len(SESSION)
    code, out = replay(exe, log, tmp)
    summary = "%d commands: %d matched, 0 differed" % (n, n)
    if code != 0 or summary not in out:
        fail("replay matches", "status %d, output:\n%s" % (code, out))
    ok("replay matches the session (" + summary + ")")
    code2, out2 = replay(exe, log, tmp)
    if code2 != 0 or out2 != out:
        fail("replay is deterministic", "a second replay gave:\n" + out2)
    ok("a second replay gives the same report")

    threads2 = text.replace("seed = 3, threads = 1}", "seed = 3, threads = 2}")
    if threads2 == text:
        fail("the log can be edited", "no threads = 1 in the log")
    open(os.path.join(tmp, "threads2.lua"), "w").write(threads2)
    code, out = replay(exe, "threads2.lua", tmp)
    if code != 0 or summary not in out:
        fail("the bootstrap on 2 threads matches the record on 1", out)
    ok("a seeded bootstrap recorded on 1 thread replays bit-identically on 2")

    changed = text.replace("--| 42\n", "--| 43\n", 1)
    open(os.path.join(tmp, "changed.lua"), "w").write(changed)
    code, out = replay(exe, "changed.lua", tmp)
    if code != 1 or "in 2: differs" not in out or "expected: 43" not in out \
            or "got:      42" not in out or ("%d commands: %d matched, 1 differed" % (n, n - 1)) not in out:
        fail("a changed number is reported", "status %d, output:\n%s" % (code, out))
    ok("a changed recorded number makes replay report that command (exit 1)")

    csv = os.path.join(tmp, "plots.csv")
    raw = bytearray(open(csv, "rb").read())
    i = raw.index(b"12.25")
    raw[i + 1] = ord("3")        # 12.25 -> 13.25
    open(csv, "wb").write(bytes(raw))
    code, out = replay(exe, log, tmp)
    m = re.search(r"data changed: plots\.csv \(recorded sha256 ([0-9a-f]{64}), now ([0-9a-f]{64})\)", out)
    if code != 1 or not m or m.group(1) == m.group(2):
        fail("a changed data file is reported", "status %d, output:\n%s" % (code, out))
    if out.index("data changed") > out.index("in 4:"):
        fail("the data change comes before the entry's result", out)
    ok("a changed byte of the data file is reported as such (exit 1)")

    kill_test(exe, env, tmp)


def kill_test(exe, env, tmp):
    log = "killed.lua"
    s = Session([exe, "-q", "--log", log], env, tmp, timeout=TIMEOUT)
    s.expect(re.escape(PROMPT), "the prompt appears")
    cmds = ["a = 6", "a * 7", 'print("orchard " .. a)', "for k = 1, 3 do\rprint(k)\rend"]
    for c in cmds:
        s.command(c, c)
    os.kill(s.pid, signal.SIGKILL)
    os.waitpid(s.pid, 0)
    text = open(os.path.join(tmp, log), encoding="utf-8").read()
    for want in ("--@ in 1 (1 line)\na = 6\n", "show(a * 7)\n--| 42\n", "--| orchard 6\n",
                 "for k = 1, 3 do\nprint(k)\nend\n--| 1\n--| 2\n--| 3\n"):
        if want not in text:
            fail("the killed session's log holds every finished command",
                 "%r is missing:\n%s" % (want, text))
    good, why = parses(exe, log, tmp)
    if not good:
        fail("the killed session's log parses as Lua", why)
    code, out = replay(exe, log, tmp)
    if code != 0 or "4 commands: 4 matched, 0 differed" not in out:
        fail("the killed session's log replays", out)
    ok("after SIGKILL the log holds every finished command, parses and replays")


if __name__ == "__main__":
    main()
