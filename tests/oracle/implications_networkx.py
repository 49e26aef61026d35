#!/usr/bin/python3
"""implications_networkx.py: g:implications against brute force from the
definitions, with networkx's d-separation.

References:
- m-separation in a graph with <-> edges is d-separation in its canonical
  DAG: each a <-> b becomes a <- L -> b with a fresh node L (Richardson and
  Spirtes 2002, cited from memory); hidden nodes stay as ordinary nodes that
  are never conditioned on.  networkx (Debian's python3-networkx) decides
  d-separation.
- On random graphs with hidden nodes and <-> edges, for every two observed
  nodes: every subset of the other observed nodes is tried.  An adjacent pair
  must not be listed; a non-adjacent pair that some subset separates must be
  listed exactly once, with a set that separates it and from which no member
  can be removed (inclusion-minimal); when the observed parents of the later
  node (in the alphabetically first topological order, g:order()) separate
  the pair, the set must lie within them; the pairs that no subset separates
  are the count .untestable.
- basis = "local" on graphs without hidden nodes or <-> edges: exactly the
  pairs (v, w), w a non-descendant of v that is not a parent, each with
  given = the parents of v, each holding by d-separation (the local Markov
  property: Pearl 2009, Causality, section 1.2.3).

Run with env B=<build dir>.  Prints "N passed, M failed".
"""
import itertools
import os
import random
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "lib"))
from oracle import run_queries, sluice_path  # noqa: E402

try:
    import networkx as nx
except ImportError:
    print("skipped: networkx not installed")
    sys.exit(0)
from nxgraphs import canonical, dsep, random_admg  # noqa: E402

SEED = 20250311
N_GRAPHS = 300
N_LOCAL = 100
TIMEOUT = 300


def random_graph(rng, latent=True):
    return random_admg(rng, (0.15, 0.6), (0.0, 0.3), 0.2, latent)


def text(D, bi, hidden):
    parts = ["hidden " + ", ".join(sorted(hidden))] if hidden else []
    parts += ["%s -> %s" % e for e in sorted(D.edges())]
    parts += ["%s <-> %s" % e for e in sorted(bi)]
    parts += sorted(D.nodes())
    return "; ".join(parts)


def adjacent(D, bi, a, b):
    return D.has_edge(a, b) or D.has_edge(b, a) or tuple(sorted((a, b))) in bi


def check_pairs(D, bi, hidden, got):
    """Problems with the listing `got` ({frozenset pair: [(a, b, given)]}, untestable)."""
    C = canonical(D, bi)
    listed, untestable = got
    obs = sorted(v for v in D.nodes() if v not in hidden)
    order = [v for v in nx.lexicographical_topological_sort(D) if v not in hidden]
    pos = {v: i for i, v in enumerate(order)}
    want_untestable = 0
    for a, b in itertools.combinations(obs, 2):
        entries = listed.pop(frozenset((a, b)), [])
        if adjacent(D, bi, a, b):
            if entries:
                return "%s and %s are adjacent but listed" % (a, b)
            continue
        rest = [v for v in obs if v not in (a, b)]
        separable = any(dsep(C, {a}, {b}, c) for k in range(len(rest) + 1)
                        for c in itertools.combinations(rest, k))
        if not separable:
            want_untestable += 1
            if entries:
                return "%s and %s: no observed set separates them, yet listed" % (a, b)
            continue
        if len(entries) != 1:
            return "%s and %s listed %d times" % (a, b, len(entries))
        ea, eb, given = entries[0]
        if pos[ea] > pos[eb]:
            return "%s ⊥ %s: a comes after b in g:order()" % (ea, eb)
        if list(given) != sorted(given) or set(given) & (hidden | {a, b}):
            return "%s ⊥ %s | %s: given unsorted or holds a hidden node or an end" % (ea, eb, given)
        if not dsep(C, {a}, {b}, given):
            return "%s ⊥ %s | %s does not hold" % (ea, eb, given)
        for g in given:
            if dsep(C, {a}, {b}, set(given) - {g}):
                return "%s ⊥ %s | %s is not minimal: %s is not needed" % (ea, eb, given, g)
        parents = {p for p in D.predecessors(eb) if p not in hidden}
        if dsep(C, {a}, {b}, parents) and not set(given) <= parents:
            return "%s ⊥ %s | %s: the parents %s of %s separate" % (ea, eb, given, sorted(parents), eb)
    if listed:
        return "unexpected entries %s" % sorted(listed)
    if untestable != want_untestable:
        return "untestable %d, brute force %d" % (untestable, want_untestable)
    return None


def check_local(D, got):
    want = []
    order = list(nx.lexicographical_topological_sort(D))
    for v in order:
        de = nx.descendants(D, v)
        pa = set(D.predecessors(v))
        for w in order:
            if w != v and w not in de and w not in pa:
                want.append((v, w, tuple(sorted(pa))))
                if not dsep(D, {v}, {w}, pa):
                    return "local Markov property fails by networkx: %s ⊥ %s | %s" % (v, w, sorted(pa))
    have = [(a, b, tuple(g)) for a, b, g in got]
    if have != want:
        return "local list %s, expected %s" % (have, want)
    return None


LUA_HEAD = r"""
local function imp(id, src, opts)
  local ok, r = pcall(function() return graph(src):implications(opts) end)
  if not ok then print(id .. " E " .. tostring(r):gsub("\n", " ")); return end
  local out = {}
  for _, t in ipairs(r) do out[#out + 1] = t.a .. "," .. t.b .. "," .. table.concat(t.given, "+") end
  print(id .. " " .. r.untestable .. " " .. table.concat(out, ";"))
end
"""


def parse(rest):
    count, _, body = rest.partition(" ")
    entries = []
    for part in body.split(";") if body else []:
        a, b, g = part.split(",")
        entries.append((a, b, g.split("+") if g else []))
    return int(count), entries


def main():
    sluice = sluice_path()
    if not os.access(sluice, os.X_OK):
        print("no executable %s (run make first)" % sluice)
        return 1
    rng = random.Random(SEED)
    lines = [LUA_HEAD]
    cases = []
    for gid in range(N_GRAPHS + N_LOCAL):
        local = gid >= N_GRAPHS
        D, bi, hidden = random_graph(rng, latent=not local)
        cases.append((D, bi, hidden, local))
        lines.append('imp(%d, [[%s]]%s)' % (gid, text(D, bi, hidden),
                                            ', {basis = "local"}' if local else ""))
    answers = run_queries(sluice, "implications_queries", lines, TIMEOUT)
    if answers is None:
        return 1
    passed = failed = 0
    listed_total = untestable_total = 0
    for gid, (D, bi, hidden, local) in enumerate(cases):
        got = answers.get(gid)
        if got is None:
            problem = "no answer"
        elif got.startswith("E "):
            problem = "error: " + got
        else:
            untestable, entries = parse(got)
            listed_total += len(entries)
            untestable_total += untestable
            if local:
                problem = check_local(D, entries)
            else:
                by_pair = {}
                for a, b, g in entries:
                    by_pair.setdefault(frozenset((a, b)), []).append((a, b, g))
                problem = check_pairs(D, bi, hidden, (by_pair, untestable))
        if problem:
            failed += 1
            if failed <= 5:
                print("FAIL graph %d (%s): %s" % (gid, text(D, bi, hidden), problem))
        else:
            passed += 1
    print("%d implications listed, %d pairs untestable" % (listed_total, untestable_total))
    print("%d passed, %d failed" % (passed, failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
