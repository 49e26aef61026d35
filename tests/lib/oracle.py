"""oracle.py: what the oracle scripts share to drive build/sluice.

An oracle writes one Lua script of numbered queries, runs it through
$B/sluice and reads back the lines "ID rest" that the script printed.
"""
import os
import subprocess
import tempfile


def sluice_path():
    """The sluice program of the build folder $B (default "build")."""
    return os.path.join(os.environ.get("B", "build"), "sluice")


def lua_list(names):
    """A Lua list of strings: {"a","b"}."""
    return "{" + ",".join('"%s"' % s for s in names) + "}"


def run_queries(sluice, name, lines, timeout):
    """Run the Lua lines as NAME.lua; a dict {id: rest of the line}, or
    None after printing sluice's error when it failed."""
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, name + ".lua")
        with open(path, "w") as f:
            f.write("\n".join(lines) + "\n")
        proc = subprocess.run([sluice, path], capture_output=True, text=True,
                              timeout=timeout)
    if proc.returncode != 0:
        print("sluice exited with %d:\n%s" % (proc.returncode, proc.stderr[-2000:]))
        return None
    answers = {}
    for line in proc.stdout.splitlines():
        head, _, rest = line.partition(" ")
        if head.isdigit():
            answers[int(head)] = rest
    return answers
