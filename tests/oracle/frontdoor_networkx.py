#!/usr/bin/python3
"""frontdoor_networkx.py: g:frontdoor and g:instruments against brute force
from the definitions, with networkx's d-separation.

References:
- The front-door criterion, Pearl 2009, "Causality", 2nd ed., definition
  3.3.3: Z intercepts every directed path from x to y; no back-door path
  from x to Z is unblocked; every back-door path from Z to y is blocked by
  x.  Written as d-separations (Jeong, Tian and Bareinboim 2022, NeurIPS,
  section 2): x and Z d-separated given {} once the edges out of x are
  removed; Z and y d-separated given {x} once the edges out of Z are
  removed.  Every subset of the observed nodes is checked; the minimal
  sets are those with no front-door proper subset.
- Conditional instruments, Brito and Pearl 2002 (UAI) and van der Zander,
  Textor and Liskiewicz 2015 (IJCAI), definition 3: W holds no descendant
  of y; z and x are d-connected given W; z and y are d-separated given W
  once the edge x -> y is removed.  For the total effect the edges from x
  into the causal paths are removed and W avoids descendants of those paths
  (with x -> y the only causal path this is the definition as printed).
  Every W among the observed nodes is tried: the check of one (z, W) must
  agree with it; the listing must name exactly the z that are instruments
  given some W within the ancestors of {y, z} (ancestral instruments, van
  der Zander et al. 2015), each with a W that the definition accepts and
  no proper subset of which it accepts.
- networkx (Debian's python3-networkx) decides d-separation on the
  canonical DAG: each a <-> b becomes a <- L -> b with a fresh node L
  (Richardson and Spirtes 2002, cited from memory), hidden nodes stay as
  ordinary nodes that are never conditioned on or chosen.

Run with env B=<build dir>.  Prints "N passed, M failed".
"""
import itertools
import os
import random
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "lib"))
from oracle import lua_list, run_queries, sluice_path  # noqa: E402

try:
    import networkx as nx
except ImportError:
    print("skipped: networkx not installed")
    sys.exit(0)
from nxgraphs import canonical, dsep, random_admg  # noqa: E402

SEED = 20250301
N_GRAPHS = 400
TIMEOUT = 300


def random_graph(rng):
    return random_admg(rng, (0.2, 0.6), (0.0, 0.35), 0.15)


def text(D, bi, hidden):
    parts = ["hidden " + ", ".join(sorted(hidden))] if hidden else []
    parts += ["%s -> %s" % e for e in sorted(D.edges())]
    parts += ["%s <-> %s" % e for e in sorted(bi)]
    touched = {v for e in bi for v in e}
    parts += [v for v in sorted(D.nodes()) if D.degree(v) == 0 and v not in touched]
    return "; ".join(parts)


def without_out_edges(C, nodes):
    H = C.copy()
    H.remove_edges_from([(a, b) for a in nodes for b in list(C.successors(a))])
    return H


def is_frontdoor(D, C, x, y, Z):
    """Pearl's three conditions, each straight from its definition."""
    # (i) every directed path from x to y meets Z
    H = D.copy()
    H.remove_nodes_from(Z)
    if nx.has_path(H, x, y):
        return False
    if not Z:
        return True
    # (ii) no open back-door path from x to Z: d-separated once x's out-edges go
    if not dsep(without_out_edges(C, [x]), {x}, Z, set()):
        return False
    # (iii) every back-door path from Z to y blocked by x
    return dsep(without_out_edges(C, Z), Z, {y}, {x})


def causal_nodes(D, x, y):
    """Nodes on proper causal paths from x to y (not x)."""
    H = D.copy()
    H.remove_edges_from([(a, x) for a in list(D.predecessors(x))])
    de = nx.descendants(H, x)
    an = nx.ancestors(H, y) | {y}
    return {v for v in de & an if v != x}


def is_instrument(D, C, x, y, z, W, cn, forb):
    if set(W) & forb:
        return False
    if dsep(C, {z}, {x}, W):
        return False
    Cc = C.copy()
    Cc.remove_edges_from([(x, v) for v in cn if Cc.has_edge(x, v)])
    return dsep(Cc, {z}, {y}, W)


LUA_HEAD = r"""
local function sets(id, g, x, y)
  local ok, r = pcall(g.frontdoor, g, x, y)
  if not ok then print(id .. " E " .. tostring(r):gsub("\n", " ")); return end
  local out = {}
  for _, s in ipairs(r) do out[#out + 1] = table.concat(s, ",") end
  print(id .. " S " .. #r .. ":" .. table.concat(out, ";"))
end
local function check(id, g, x, y, z)
  local ok, r, why = pcall(g.frontdoor, g, x, y, z)
  if not ok then print(id .. " E " .. tostring(r):gsub("\n", " ")); return end
  local kinds = {}
  for _, w in ipairs(why or {}) do kinds[#kinds + 1] = w.kind .. ":" .. (w.trail and w.trail.text or "") end
  print(id .. " C " .. tostring(r) .. " " .. table.concat(kinds, "|"))
end
local function ivs(id, g, x, y)
  local ok, r = pcall(g.instruments, g, x, y)
  if not ok then print(id .. " E " .. tostring(r):gsub("\n", " ")); return end
  local out = {}
  for _, s in ipairs(r) do out[#out + 1] = s.z .. "=" .. table.concat(s.given, ",") end
  print(id .. " I " .. table.concat(out, ";"))
end
local function ivcheck(id, g, x, y, z, w)
  local ok, r, why = pcall(g.instruments, g, x, y, z, w)
  if not ok then print(id .. " E " .. tostring(r):gsub("\n", " ")); return end
  local kinds = {}
  for _, k in ipairs(why or {}) do kinds[#kinds + 1] = k.kind end
  print(id .. " K " .. tostring(r) .. " " .. table.concat(kinds, "|"))
end
"""


def parse_sets(s):
    """"count:a,b;c" as a list of sets (the count tells {} from no set)."""
    count, _, body = s.partition(":")
    if int(count) == 0:
        return []
    return [frozenset(p.split(",")) if p else frozenset() for p in body.split(";")]


def main():
    sluice = sluice_path()
    if not os.access(sluice, os.X_OK):
        print("no executable %s (run make first)" % sluice)
        return 1
    rng = random.Random(SEED)
    lines = [LUA_HEAD]
    expect = []        # (id, kind, data)
    for gid in range(N_GRAPHS):
        D, bi, hidden = random_graph(rng)
        C = canonical(D, bi)
        obs = sorted(v for v in D.nodes() if v not in hidden)
        if len(obs) < 2:
            continue
        lines.append("do local g = graph[[%s]]" % text(D, bi, hidden))
        for _ in range(2):
            x, y = rng.sample(obs, 2)
            rest = [v for v in obs if v not in (x, y)]
            subsets = [frozenset(c) for k in range(len(rest) + 1)
                       for c in itertools.combinations(rest, k)]
            fd = {s for s in subsets if is_frontdoor(D, C, x, y, s)}
            minimal = sorted((s for s in fd if not any(t < s for t in fd)),
                             key=lambda s: (len(s), sorted(s)))
            qid = len(expect)
            expect.append((qid, "S", (x, y, minimal, text(D, bi, hidden))))
            lines.append('sets(%d, g, "%s", "%s")' % (qid, x, y))
            for s in rng.sample(subsets, min(4, len(subsets))):
                qid = len(expect)
                expect.append((qid, "C", (x, y, s, s in fd, text(D, bi, hidden))))
                lines.append('check(%d, g, "%s", "%s", %s)' % (qid, x, y, lua_list(sorted(s))))
            # instruments
            cn = causal_nodes(D, x, y)
            forb = set()
            for c in cn:
                forb |= nx.descendants(D, c) | {c}
            truth, anc_truth = {}, {}
            Cc = C.copy()
            Cc.remove_edges_from([(x, v) for v in cn if Cc.has_edge(x, v)])
            for z in rest:
                others = [v for v in rest if v != z]
                ws = [frozenset(c) for k in range(len(others) + 1)
                      for c in itertools.combinations(others, k)]
                good = [w for w in ws if is_instrument(D, C, x, y, z, w, cn, forb)]
                truth[z] = good
                an = (nx.ancestors(Cc, y) | nx.ancestors(Cc, z)) - {"L%d" % k for k in range(len(bi))}
                anc_truth[z] = [w for w in good if w <= an]
                for w in rng.sample(ws, min(2, len(ws))):
                    qid = len(expect)
                    expect.append((qid, "K", (x, y, z, w, w in set(good), text(D, bi, hidden))))
                    lines.append('ivcheck(%d, g, "%s", "%s", "%s", %s)'
                                 % (qid, x, y, z, lua_list(sorted(w))))
            qid = len(expect)
            expect.append((qid, "I", (x, y, truth, anc_truth, text(D, bi, hidden))))
            lines.append('ivs(%d, g, "%s", "%s")' % (qid, x, y))
        lines.append("end")
    answers = run_queries(sluice, "frontdoor_queries", lines, TIMEOUT)
    if answers is None:
        return 1
    passed = failed = 0
    shown = []
    counts = {"S": 0, "S+": 0, "C": 0, "K": 0, "I": 0, "I+": 0, "nonanc": 0}
    for qid, kind, data in expect:
        got = answers.get(qid)
        problem = None
        if got is None:
            problem = "no answer"
        elif got.startswith("E "):
            problem = "error: " + got
        elif kind == "S":
            x, y, minimal, gtext = data
            have = parse_sets(got[2:])
            counts["S"] += 1
            counts["S+"] += bool(minimal)
            if sorted(have, key=lambda s: (len(s), sorted(s))) != minimal:
                problem = "minimal sets %s, brute force %s" % (
                    [sorted(s) for s in have], [sorted(s) for s in minimal])
        elif kind == "C":
            x, y, s, want, gtext = data
            counts["C"] += 1
            verdict = got[2:].split(" ", 1)[0]
            if verdict != ("true" if want else "false"):
                problem = "check of %s: %s, brute force %s" % (sorted(s), got, want)
            elif not want and len(got[2:].split(" ", 1)) < 2:
                problem = "false without a reason"
        elif kind == "K":
            x, y, z, w, want, gtext = data
            counts["K"] += 1
            verdict = got[2:].split(" ", 1)[0]
            if verdict != ("true" if want else "false"):
                problem = "instrument %s given %s: %s, brute force %s" % (z, sorted(w), got, want)
        elif kind == "I":
            x, y, truth, anc_truth, gtext = data
            counts["I"] += 1
            have = {}
            for item in (got[2:].split(";") if got[2:] else []):
                z, _, w = item.partition("=")
                have[z] = frozenset(w.split(",")) if w else frozenset()
            # the listing is complete for ancestral instruments (W within
            # An[y, z] of the graph without x's causal edges); every answer
            # must be an instrument by the general definition
            want = sorted(z for z, good in anc_truth.items() if good)
            counts["I+"] += bool(want)
            counts["nonanc"] += sum(1 for z in truth if truth[z] and not anc_truth[z])
            if sorted(have) != want:
                problem = "instruments %s, brute force %s" % (sorted(have), want)
            else:
                for z, w in have.items():
                    if w not in set(truth[z]):
                        problem = "%s given %s is not an instrument by the definition" % (z, sorted(w))
                    elif any(w2 < w for w2 in truth[z]):
                        problem = "%s given %s: a smaller set %s works" % (
                            z, sorted(w), sorted(next(w2 for w2 in truth[z] if w2 < w)))
        if problem:
            failed += 1
            if len(shown) < 6:
                shown.append("query %d (%s) x=%s y=%s: %s\n  graph: %s"
                             % (qid, kind, data[0], data[1], problem, data[-1]))
        else:
            passed += 1
    for s in shown:
        print("MISMATCH " + s)
    print("listings %d (%d with a front-door set), checks %d; instrument listings %d "
          "(%d with one), instrument checks %d; %d instruments need a W outside An[y, z]"
          % (counts["S"], counts["S+"], counts["C"], counts["I"], counts["I+"], counts["K"],
             counts["nonanc"]))
    print("%d passed, %d failed" % (passed, failed))
    return 0 if failed == 0 and passed >= 1000 else 1


if __name__ == "__main__":
    sys.exit(main())
