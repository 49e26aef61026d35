"""ptyutil.py: the sluice prompt on a pseudo-terminal, for the tests that
type at it as a person would (tests/shell/pty_session.py, log_session.py).

Standard library only.
"""
import fcntl
import os
import pty
import re
import select
import signal
import struct
import sys
import termios
import time

PROMPT = "sluice> "
MORE = "...> "
# Terminal control sequences that Readline writes between the characters,
# and carriage returns: what is left reads as plain lines.
CONTROL = re.compile(r"\x1b\[[0-9;?]*[A-Za-z]|\x1b\][^\x07]*\x07|\x1b[=>()][0-9A-Za-z]?|[\x07\x08\r]")

PASSED = []


def fail(why, detail):
    """Report a failed check and end the test with status 1."""
    print("FAIL  %s\n      %s" % (why, detail.replace("\n", "\n      ")))
    sys.exit(1)


def ok(what):
    PASSED.append(what)
    print("ok    " + what)


def sluice_exe():
    """The sluice program in the build directory named by B."""
    exe = os.path.abspath(os.path.join(os.environ.get("B", "build"), "sluice"))
    if not os.access(exe, os.X_OK):
        fail("the program exists", "no executable at " + exe)
    return exe


def terminal_env(tmp):
    """The environment of a session kept inside tmp: its own home and state
    folder (tmp/state), an empty inputrc (no site key bindings), no LUA_INIT."""
    inputrc = os.path.join(tmp, "inputrc")
    open(inputrc, "w").close()
    env = {k: v for k, v in os.environ.items() if not k.startswith("LUA_INIT")}
    env.update(HOME=os.path.join(tmp, "home"), XDG_STATE_HOME=os.path.join(tmp, "state"),
               TERM="xterm", INPUTRC=inputrc, LC_ALL="C.UTF-8")
    return env


class Session:
    """One sluice process on a pseudo-terminal, and all it has written.

    argv runs in the folder cwd (None: this one); size, (rows, columns),
    sets the terminal's size; each wait gives up after timeout seconds."""

    def __init__(self, argv, env, cwd=None, size=None, timeout=10.0):
        self.timeout = timeout
        self.pid, self.fd = pty.fork()
        if self.pid == 0:
            if cwd:
                os.chdir(cwd)
            os.execve(argv[0], argv, env)
        if size:
            fcntl.ioctl(self.fd, termios.TIOCSWINSZ, struct.pack("HHHH", size[0], size[1], 0, 0))
        self.raw = b""
        self.seen = 0          # offset in text() already matched
        self.closed = False

    def text(self):
        """Everything written so far, control sequences removed."""
        return CONTROL.sub("", self.raw.decode("utf-8", "replace"))

    def read_some(self, wait):
        """Read what is there within wait seconds; False at end of output."""
        ready, _, _ = select.select([self.fd], [], [], wait)
        if not ready:
            return True
        try:
            data = os.read(self.fd, 4096)
        except OSError:
            data = b""
        if not data:
            self.closed = True
            return False
        self.raw += data
        return True

    def expect(self, pattern, why):
        """Wait until pattern (a regex) appears after what was matched last;
        the match."""
        rx = re.compile(pattern)
        deadline = time.monotonic() + self.timeout
        while True:
            m = rx.search(self.text(), self.seen)
            if m:
                self.seen = m.end()
                return m
            if self.closed or time.monotonic() > deadline:
                fail(why, "waited %.0f s for %r; the end of the screen was:\n%s"
                     % (self.timeout, pattern, self.text()[-800:]))
            self.read_some(0.2)

    def since(self, mark):
        """The text written from offset mark up to what was matched last."""
        return self.text()[mark:self.seen]

    def send(self, keys):
        os.write(self.fd, keys.encode())

    def command(self, line, why, then=PROMPT):
        """Type line and Enter, wait for the next prompt; return the output."""
        mark = self.seen
        self.send(line + "\r")
        self.expect(re.escape(then), why)
        return self.since(mark)

    def wait_exit(self, why):
        """The exit status, after draining the output; fails the check why
        when the process is still running after the timeout."""
        deadline = time.monotonic() + self.timeout
        while time.monotonic() < deadline:
            pid, status = os.waitpid(self.pid, os.WNOHANG)
            if pid == self.pid:
                return os.waitstatus_to_exitcode(status)
            self.read_some(0.1)
        os.kill(self.pid, signal.SIGKILL)
        os.waitpid(self.pid, 0)
        fail(why, "still running after %.0f s" % self.timeout)
