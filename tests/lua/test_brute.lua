-- Separation and adjustment checked by brute force on small random graphs.
-- Every expected value here is computed by this file from a definition, on
-- paths it enumerates itself by depth-first search over g:edges(); none
-- comes from sluice's trail functions.  The definitions (references cited
-- from memory, numbering of definitions omitted where unsure):
--   m-separation: a path is open given Z iff every collider on it (a node
--     with arrowheads from both sides; <-> has arrowheads at both ends) is
--     in Z or has a descendant in Z, and no other inner node is in Z
--     (Pearl, "Causality" 2nd ed., def. 1.2.3; Richardson 2003 for <->).
--   adjustment criterion: Shpitser, VanderWeele and Robins (2010); for <->
--     and hidden nodes, van der Zander, Liskiewicz and Textor (2019), the
--     same statement read in the graph with <-> edges.  Z is admissible iff
--     (i) no member is hidden, x or y; (ii) no member is a reflexive
--     descendant of a node w ~= x on a proper causal path x -> ... -> y;
--     (iii) every proper path from x to y that is not directed x -> ... -> y
--     is blocked by Z.
--   minimal sets: van der Zander et al. (2019): Z is I-minimal iff
--     admissible, I <= Z, and no Z' with I <= Z' < Z is admissible.
--   back-door criterion: Pearl, "Causality" 2nd ed., def. 3.3.1.
--   optimal set: Henckel, Perkovic and Maathuis (2022, JRSS-B):
--     O = pa(cn(x, y)) \ forb(x, y); forb = de(cn) + {x}, de reflexive.

-- A seeded 64-bit LCG (Knuth's MMIX constants), so runs repeat exactly.
local state = 0x5EED5EED2024
local function rnd(n)                       -- uniform on 1..n
  state = state * 6364136223846793005 + 1442695040888963407
  return ((state >> 33) % n) + 1
end
local function chance(p) return rnd(1000000) <= p * 1000000 end
local function shuffle(t)
  for i = #t, 2, -1 do local j = rnd(i); t[i], t[j] = t[j], t[i] end
  return t
end

local function sorted(t) local c = {} for i, v in ipairs(t) do c[i] = v end table.sort(c) return c end
local function key(set) return table.concat(sorted(set), ",") end
local function setof(list) local s = {} for _, v in ipairs(list) do s[v] = true end return s end
-- The members of list other than x and y, in order.
local function without(list, x, y)
  local out = {}
  for _, v in ipairs(list) do if v ~= x and v ~= y then out[#out + 1] = v end end
  return out
end

-- A random graph text: 3..7 observed nodes n0.., directed edges along a
-- random order; kind 2 adds one or two <-> edges, kind 3 a hidden node with
-- two observed children, kind 4 both.
local function random_text()
  local n = 2 + rnd(5)
  local names = {}
  for i = 1, n do names[i] = "n" .. (i - 1) end
  local order = shuffle({table.unpack(names)})
  local p = ({0.2, 0.35, 0.5, 0.7})[rnd(4)]
  local stmts, want = {}, {}
  for i = 1, n do
    for j = i + 1, n do
      if chance(p) then
        stmts[#stmts + 1] = order[i] .. " -> " .. order[j]
        want[order[i] .. "->" .. order[j]] = true
      end
    end
  end
  local kind = rnd(4)
  if kind == 2 or kind == 4 then
    for _ = 1, rnd(2) do
      local a, b = names[rnd(n)], names[rnd(n)]
      if a ~= b then
        stmts[#stmts + 1] = a .. " <-> " .. b
        if a > b then a, b = b, a end
        want[a .. "<->" .. b] = true
      end
    end
  end
  if kind == 3 or kind == 4 then
    local u = "n" .. n
    local pick = shuffle({table.unpack(names)})
    stmts[#stmts + 1] = "hidden " .. u
    stmts[#stmts + 1] = u .. " -> " .. pick[1] .. ", " .. pick[2]
    want[u .. "->" .. pick[1]] = true
    want[u .. "->" .. pick[2]] = true
  end
  for _, v in ipairs(names) do stmts[#stmts + 1] = v end   -- declare every node
  return table.concat(stmts, "; "), want
end

-- The graph as this file sees it, built from g:nodes(), g:hidden(), g:edges().
-- adj[v] is a list of steps {to=, head_from=, head_to=, fwd=}: arrowhead at
-- v, arrowhead at the neighbour, and whether the step is v -> neighbour.
local function model(g)
  local G = {nodes = g:nodes(), hidden = setof(g:hidden()), adj = {}, kids = {}}
  for _, v in ipairs(G.nodes) do G.adj[v], G.kids[v] = {}, {} end
  for _, e in ipairs(g:edges()) do
    local a, b = e.from, e.to
    if e.kind == "->" then
      table.insert(G.adj[a], {to = b, head_from = false, head_to = true, fwd = true})
      table.insert(G.adj[b], {to = a, head_from = true, head_to = false, fwd = false})
      table.insert(G.kids[a], b)
    else
      table.insert(G.adj[a], {to = b, head_from = true, head_to = true, fwd = false})
      table.insert(G.adj[b], {to = a, head_from = true, head_to = true, fwd = false})
    end
  end
  G.observed = {}
  for _, v in ipairs(G.nodes) do if not G.hidden[v] then G.observed[#G.observed + 1] = v end end
  -- reflexive descendants by DFS over directed edges
  G.de = {}
  for _, v in ipairs(G.nodes) do
    local seen, stack = {[v] = true}, {v}
    while #stack > 0 do
      local w = table.remove(stack)
      for _, c in ipairs(G.kids[w]) do
        if not seen[c] then seen[c] = true; stack[#stack + 1] = c end
      end
    end
    G.de[v] = seen
  end
  return G
end

-- Every simple path from a to b: a list of {nodes=, steps=}.
local function paths(G, a, b)
  local out, nodes, steps, on = {}, {a}, {}, {[a] = true}
  local function dfs(v)
    if v == b then
      out[#out + 1] = {nodes = {table.unpack(nodes)}, steps = {table.unpack(steps)}}
      return
    end
    for _, s in ipairs(G.adj[v]) do
      if not on[s.to] then
        on[s.to] = true; nodes[#nodes + 1] = s.to; steps[#steps + 1] = s
        dfs(s.to)
        on[s.to] = nil; nodes[#nodes] = nil; steps[#steps] = nil
      end
    end
  end
  dfs(a)
  return out
end

local function path_text(p)
  local t = {p.nodes[1]}
  for i, s in ipairs(p.steps) do
    t[#t + 1] = s.fwd and "->" or (s.head_from and s.head_to) and "<->" or "<-"
    t[#t + 1] = p.nodes[i + 1]
  end
  return table.concat(t, " ")
end

-- Open given the set Z (a table name -> true), by the rule at the top.
local function is_open(G, p, Z)
  for i = 2, #p.nodes - 1 do
    local v = p.nodes[i]
    local collider = p.steps[i - 1].head_to and p.steps[i].head_from
    if collider then
      local opened = false
      for z in pairs(Z) do if G.de[v][z] then opened = true break end end
      if not opened then return false end
    elseif Z[v] then
      return false
    end
  end
  return true
end

local function is_directed(p)
  for _, s in ipairs(p.steps) do if not s.fwd then return false end end
  return true
end

-- m-separation of the sets A and B given Z, over all paths between them.
local function my_separated(G, A, B, Z)
  for _, a in ipairs(A) do
    for _, b in ipairs(B) do
      for _, p in ipairs(paths(G, a, b)) do
        if is_open(G, p, Z) then return false, p end
      end
    end
  end
  return true
end

-- The forbidden nodes: reflexive descendants of every w ~= x on a directed
-- path x -> ... -> y (Shpitser et al. 2010, condition (a)).
local function forbidden(G, x, y, P)
  local forb, cn = {}, {}
  for _, p in ipairs(P) do
    if is_directed(p) then
      for i = 2, #p.nodes do
        local w = p.nodes[i]
        cn[w] = true
        for d in pairs(G.de[w]) do forb[d] = true end
      end
    end
  end
  return forb, cn
end

-- The adjustment criterion, from its definition.
local function my_admissible(G, x, y, Z, P)
  for z in pairs(Z) do
    if G.hidden[z] or z == x or z == y then return false end        -- (i)
  end
  local forb = forbidden(G, x, y, P)
  for z in pairs(Z) do if forb[z] then return false end end         -- (ii)
  for _, p in ipairs(P) do                                           -- (iii)
    if not is_directed(p) and is_open(G, p, Z) then return false end
  end
  return true
end

-- Pearl's back-door criterion, from its definition.
local function my_backdoor(G, x, y, Z, P)
  for z in pairs(Z) do
    if G.hidden[z] or z == x or z == y or G.de[x][z] then return false end
  end
  for _, p in ipairs(P) do
    if p.steps[1].head_from and is_open(G, p, Z) then return false end
  end
  return true
end

-- All subsets of a list, as lists (in bitmask order).
local function subsets(list)
  local out = {}
  for m = 0, (1 << #list) - 1 do
    local s = {}
    for i = 1, #list do if m & (1 << (i - 1)) ~= 0 then s[#s + 1] = list[i] end end
    out[#out + 1] = s
  end
  return out
end

local function is_subset(a, b)      -- a <= b, both lists
  local sb = setof(b)
  for _, v in ipairs(a) do if not sb[v] then return false end end
  return true
end

-- The inclusion-minimal members of a family of sets, as sorted keys.
local function minimal_keys(family)
  local out = {}
  for i, s in ipairs(family) do
    local minimal = true
    for j, t in ipairs(family) do
      if i ~= j and #t < #s and is_subset(t, s) then minimal = false break end
    end
    if minimal then out[#out + 1] = key(s) end
  end
  table.sort(out)
  return out
end

local function set_keys(list)
  local out = {}
  for i, s in ipairs(list) do out[i] = key(s) end
  table.sort(out)
  return out
end

local function fail(text, what, ...)
  error(string.format("graph [[%s]]: " .. what, text, ...), 0)
end

-- The random graphs, made once and shared by the tests below.
local N_GRAPHS = 800
local cases = {}
for _ = 1, N_GRAPHS do
  local text, want = random_text()
  local g = graph(text)
  local G = model(g)
  local pairs_ = {}
  local obs = G.observed
  for _ = 1, 2 do
    local i, j = rnd(#obs), rnd(#obs - 1)
    if j >= i then j = j + 1 end
    pairs_[#pairs_ + 1] = {obs[i], obs[j]}
  end
  cases[#cases + 1] = {text = text, want = want, g = g, G = G, pairs = pairs_}
end

local stats = {admissible = 0, adm_true = 0, backdoor = 0, bd_true = 0, sep = 0,
               sep_true = 0, none = 0, optimal = 0, cheapest = 0, adjust = 0}

test("brute: g:edges() lists exactly the edges written", function()
  -- reference: the statements this file wrote into the graph text
  for _, c in ipairs(cases) do
    local got = {}
    for _, e in ipairs(c.g:edges()) do
      local a, b = e.from, e.to
      if e.kind == "<->" and a > b then a, b = b, a end
      got[a .. e.kind .. b] = true
    end
    for k in pairs(c.want) do
      if not got[k] then fail(c.text, "edge %s missing from g:edges()", k) end
    end
    for k in pairs(got) do
      if not c.want[k] then fail(c.text, "g:edges() has unwritten edge %s", k) end
    end
  end
end)

test("brute: g:admissible agrees with the adjustment criterion", function()
  for _, c in ipairs(cases) do
    local G, g = c.G, c.g
    for _, xy in ipairs(c.pairs) do
      local x, y = xy[1], xy[2]
      local P = paths(G, x, y)
      local others = without(G.observed, x, y)
      for _, Z in ipairs(subsets(others)) do
        local want = my_admissible(G, x, y, setof(Z), P)
        local ok, reasons = g:admissible(x, y, Z)
        stats.admissible = stats.admissible + 1
        if want then stats.adm_true = stats.adm_true + 1 end
        if ok ~= want then
          fail(c.text, "g:admissible(%q, %q, {%s}) = %s, definition says %s",
               x, y, key(Z), tostring(ok), tostring(want))
        end
        if not ok and (type(reasons) ~= "table" or #reasons == 0) then
          fail(c.text, "g:admissible(%q, %q, {%s}) = false with no reasons", x, y, key(Z))
        end
        -- a reason naming an open trail names a real non-causal path, open given Z
        for _, r in ipairs(reasons or {}) do
          if r.kind == "open" then
            local found = false
            for _, p in ipairs(P) do
              if path_text(p) == r.trail.text and not is_directed(p) and
                 is_open(G, p, setof(Z)) then found = true end
            end
            if not found then
              fail(c.text, "g:admissible(%q, %q, {%s}): reason trail %s is not an open " ..
                   "non-causal path", x, y, key(Z), tostring(r.trail.text))
            end
          end
        end
      end
      -- hidden nodes are never admissible members (DESIGN.md; criterion (i))
      for h in pairs(G.hidden) do
        local ok = g:admissible(x, y, {h})
        if ok then fail(c.text, "g:admissible(%q, %q, {%q}) accepted a hidden node", x, y, h) end
      end
    end
  end
end)

test("brute: g:adjust lists exactly the minimal admissible sets", function()
  for _, c in ipairs(cases) do
    local G, g = c.G, c.g
    for _, xy in ipairs(c.pairs) do
      local x, y = xy[1], xy[2]
      local others = without(G.observed, x, y)
      local family = {}
      for _, Z in ipairs(subsets(others)) do
        if g:admissible(x, y, Z) then family[#family + 1] = Z end
      end
      local sets = g:adjust(x, y)
      stats.adjust = stats.adjust + 1
      local got, want = set_keys(sets), minimal_keys(family)
      for _, s in ipairs(sets) do
        if key(s) ~= table.concat(s, ",") then
          fail(c.text, "g:adjust(%q, %q) set {%s} is not sorted", x, y, table.concat(s, ","))
        end
      end
      if table.concat(got, "|") ~= table.concat(want, "|") then
        fail(c.text, "g:adjust(%q, %q) = {%s}, minimal admissible sets {%s}", x, y,
             table.concat(got, "} {"), table.concat(want, "} {"))
      end
      if #family == 0 then
        stats.none = stats.none + 1
        if not sets.none then fail(c.text, "g:adjust(%q, %q) empty without .none", x, y) end
      elseif sets.none then
        fail(c.text, "g:adjust(%q, %q) has sets and .none", x, y)
      end
      -- forbid and require: the I-minimal sets within I <= Z <= R
      local F, R = {}, {}
      for _, v in ipairs(others) do
        local r = rnd(4)
        if r == 1 then F[#F + 1] = v elseif r == 2 then R[#R + 1] = v end
      end
      local sub = {}
      for _, Z in ipairs(family) do
        local sz = setof(Z)
        local okz = is_subset(R, Z)
        for _, f in ipairs(F) do if sz[f] then okz = false end end
        if okz then sub[#sub + 1] = Z end
      end
      -- a required node that the criterion forbids is an argument error
      local forb = forbidden(G, x, y, paths(G, x, y))
      local bad = false
      for _, r in ipairs(R) do if forb[r] then bad = true end end
      if bad then
        if #sub > 0 then fail(c.text, "require={%s} meets forb yet sets exist", key(R)) end
        raises(function() return g:adjust(x, y, {forbid = F, require = R}) end,
               "cannot be required")
        goto next_pair
      end
      local sets2 = g:adjust(x, y, {forbid = F, require = R})
      local got2, want2 = set_keys(sets2), minimal_keys(sub)
      if table.concat(got2, "|") ~= table.concat(want2, "|") then
        fail(c.text, "g:adjust(%q, %q, {forbid={%s}, require={%s}}) = {%s}, expected {%s}",
             x, y, key(F), key(R), table.concat(got2, "} {"), table.concat(want2, "} {"))
      end
      if (#sub == 0) ~= (sets2.none ~= nil) then
        fail(c.text, "g:adjust(%q, %q, {forbid={%s}, require={%s}}): .none is %s with %d sets",
             x, y, key(F), key(R), tostring(sets2.none), #sub)
      end
      ::next_pair::
    end
  end
end)

test("brute: g:separated agrees with path-based m-separation", function()
  for _, c in ipairs(cases) do
    local G, g = c.G, c.g
    for _ = 1, 6 do
      local pool = shuffle({table.unpack(G.nodes)})
      local na = rnd(math.min(2, #pool - 1))
      local nb = rnd(math.min(2, #pool - na))
      local nz = rnd(math.min(3, #pool - na - nb) + 1) - 1
      local A, B, Z = {}, {}, {}
      for i = 1, na do A[#A + 1] = pool[i] end
      for i = na + 1, na + nb do B[#B + 1] = pool[i] end
      for i = na + nb + 1, na + nb + nz do Z[#Z + 1] = pool[i] end
      local want = my_separated(G, A, B, setof(Z))
      local got, w = g:separated(A, B, Z)
      stats.sep = stats.sep + 1
      if want then stats.sep_true = stats.sep_true + 1 end
      if got ~= want then
        fail(c.text, "g:separated({%s}, {%s}, {%s}) = %s, m-separation says %s",
             key(A), key(B), key(Z), tostring(got), tostring(want))
      end
      if not got then
        -- the witness is one of the enumerated paths and is open given Z
        local found = false
        for _, a in ipairs(A) do
          for _, b in ipairs(B) do
            for _, p in ipairs(paths(G, a, b)) do
              if path_text(p) == w.text and is_open(G, p, setof(Z)) then found = true end
            end
          end
        end
        if not found then
          fail(c.text, "g:separated({%s}, {%s}, {%s}) witness %s is not an open path",
               key(A), key(B), key(Z), tostring(w.text))
        end
      end
    end
  end
end)

test("brute: g:backdoor agrees with Pearl's back-door criterion", function()
  for _, c in ipairs(cases) do
    local G, g = c.G, c.g
    for _, xy in ipairs(c.pairs) do
      local x, y = xy[1], xy[2]
      local P = paths(G, x, y)
      local others = without(G.observed, x, y)
      for _, Z in ipairs(subsets(others)) do
        local want = my_backdoor(G, x, y, setof(Z), P)
        local ok = g:backdoor(x, y, Z)
        stats.backdoor = stats.backdoor + 1
        if want then stats.bd_true = stats.bd_true + 1 end
        if ok ~= want then
          fail(c.text, "g:backdoor(%q, %q, {%s}) = %s, definition says %s",
               x, y, key(Z), tostring(ok), tostring(want))
        end
      end
    end
  end
end)

test("brute: g:optimal is admissible and is pa(cn) \\ forb", function()
  for _, c in ipairs(cases) do
    local G, g = c.G, c.g
    local plain = next(G.hidden) == nil
    for _, e in ipairs(g:edges()) do if e.kind == "<->" then plain = false end end
    if plain then
      for _, xy in ipairs(c.pairs) do
        local x, y = xy[1], xy[2]
        local P = paths(G, x, y)
        local O = g:optimal(x, y)
        if O then
          stats.optimal = stats.optimal + 1
          if not g:admissible(x, y, O) or not my_admissible(G, x, y, setof(O), P) then
            fail(c.text, "g:optimal(%q, %q) = {%s} is not admissible", x, y, key(O))
          end
        end
        if G.de[x][y] then
          -- Henckel et al. 2022: in a DAG with y a descendant of x a valid
          -- set exists (pa(x)), so O exists and is valid (their theorem)
          local forb, cn = forbidden(G, x, y, P)
          forb[x] = true
          local want = {}
          for _, v in ipairs(G.nodes) do
            if not forb[v] then
              for _, k in ipairs(G.kids[v]) do
                if cn[k] then want[#want + 1] = v break end
              end
            end
          end
          if not O or key(O) ~= key(want) then
            fail(c.text, "g:optimal(%q, %q) = %s, pa(cn) \\ forb = {%s}", x, y,
                 O and "{" .. key(O) .. "}" or "nil", key(want))
          end
        end
      end
    end
  end
end)

test("brute: g:cheapest finds a smallest and a least-cost admissible set", function()
  for _, c in ipairs(cases) do
    local G, g = c.G, c.g
    for _, xy in ipairs(c.pairs) do
      local x, y = xy[1], xy[2]
      local P = paths(G, x, y)
      local others = without(G.observed, x, y)
      local costs = {}
      for _, v in ipairs(G.observed) do costs[v] = rnd(6) - 1 end
      local best_size, best_cost = math.huge, math.huge
      for _, Z in ipairs(subsets(others)) do
        if g:admissible(x, y, Z) then
          best_size = math.min(best_size, #Z)
          local s = 0
          for _, v in ipairs(Z) do s = s + costs[v] end
          best_cost = math.min(best_cost, s)
        end
      end
      stats.cheapest = stats.cheapest + 1
      -- unit costs: the size of a smallest admissible set
      local S, total = g:cheapest(x, y)
      if best_size == math.huge then
        if S ~= nil then fail(c.text, "g:cheapest(%q, %q) = {%s}, none admissible", x, y, key(S)) end
      else
        if S == nil then
          fail(c.text, "g:cheapest(%q, %q) = nil, but a set of size %d is admissible", x, y,
               best_size)
        end
        if not my_admissible(G, x, y, setof(S), P) then
          fail(c.text, "g:cheapest(%q, %q) = {%s} is not admissible", x, y, key(S))
        end
        if #S ~= best_size or total ~= best_size then
          fail(c.text, "g:cheapest(%q, %q) = {%s} at %s, smallest admissible size %d", x, y,
               key(S), tostring(total), best_size)
        end
      end
      -- random costs 0..5: the least total over all admissible sets
      local S2, total2 = g:cheapest(x, y, costs)
      if best_cost ~= math.huge then
        local s = 0
        for _, v in ipairs(S2 or {}) do s = s + costs[v] end
        if not S2 or not my_admissible(G, x, y, setof(S2), P) or s ~= best_cost or
           total2 ~= best_cost then
          local ct = {}
          for _, v in ipairs(G.observed) do ct[#ct + 1] = v .. "=" .. costs[v] end
          fail(c.text, "g:cheapest(%q, %q, {%s}) = %s at %s, least cost %d", x, y,
               table.concat(ct, ","), S2 and "{" .. key(S2) .. "}" or "nil",
               tostring(total2), best_cost)
        end
      elseif S2 ~= nil then
        fail(c.text, "g:cheapest(%q, %q, costs) = {%s}, none admissible", x, y, key(S2))
      end
    end
  end
end)

test("brute: g:trails lists every path with its kind and state", function()
  -- reference: the simple paths enumerated here; kind by definition
  -- (causal: x -> ... -> y; backdoor: an arrowhead into x; else noncausal);
  -- open by the m-separation rule; blocked_at a node that blocks
  for _, c in ipairs(cases) do
    local G, g = c.G, c.g
    for _, xy in ipairs(c.pairs) do
      local x, y = xy[1], xy[2]
      local pool = without(G.nodes, x, y)
      shuffle(pool)
      local Z = {}
      for i = 1, rnd(math.min(3, #pool) + 1) - 1 do Z[#Z + 1] = pool[i] end
      local sz = setof(Z)
      local want = {}
      for _, p in ipairs(paths(G, x, y)) do
        local kind = is_directed(p) and "causal" or p.steps[1].head_from and "backdoor" or
                     "noncausal"
        want[path_text(p)] = {kind = kind, open = is_open(G, p, sz), p = p}
      end
      local got = g:trails(x, y, {given = Z, limit = 100000})
      local n = 0
      for _ in pairs(want) do n = n + 1 end
      if #got ~= n then
        fail(c.text, "g:trails(%q, %q, {given={%s}}) has %d trails, %d paths exist",
             x, y, key(Z), #got, n)
      end
      for _, t in ipairs(got) do
        local w = want[t.text]
        if not w then
          fail(c.text, "g:trails(%q, %q): %s is not a path", x, y, tostring(t.text))
        end
        if t.kind ~= w.kind or t.open ~= w.open then
          fail(c.text, "g:trails(%q, %q, {given={%s}}): %s is %s/%s, expected %s/%s", x, y,
               key(Z), t.text, tostring(t.kind), tostring(t.open), w.kind, tostring(w.open))
        end
        if not t.open then
          local i = 0
          for k, v in ipairs(w.p.nodes) do if v == t.blocked_at then i = k end end
          local blocks = false
          if i > 1 and i < #w.p.nodes then
            local v = w.p.nodes[i]
            if w.p.steps[i - 1].head_to and w.p.steps[i].head_from then
              blocks = true
              for z in pairs(sz) do if G.de[v][z] then blocks = false end end
            else
              blocks = sz[v] or false
            end
          end
          if not blocks then
            fail(c.text, "g:trails(%q, %q, {given={%s}}): %s blocked_at %s does not block",
                 x, y, key(Z), t.text, tostring(t.blocked_at))
          end
        end
      end
    end
  end
end)

test("brute: g:adjust on 8-12 node graphs equals the minimal admissible sets", function()
  -- reference: inclusion-minimal members of the family of all subsets that
  -- g:admissible accepts (itself checked against the definition above)
  for _ = 1, 100 do
    local n = 7 + rnd(5)
    local order, st = {}, {}
    for i = 1, n do order[i] = "n" .. (i - 1) end
    shuffle(order)
    local p = ({0.15, 0.25, 0.4})[rnd(3)]
    for i = 1, n do
      for j = i + 1, n do if chance(p) then st[#st + 1] = order[i] .. " -> " .. order[j] end end
    end
    if rnd(2) == 1 then
      for _ = 1, rnd(3) do
        local a, b = order[rnd(n)], order[rnd(n)]
        if a ~= b then st[#st + 1] = a .. " <-> " .. b end
      end
    end
    for i = 1, n do st[#st + 1] = order[i] end
    local text = table.concat(st, "; ")
    local g = graph(text)
    local x, y = order[1], order[2 + rnd(n - 1) - 1]
    local others = without(g:nodes(), x, y)
    local fam = {}
    for m = 0, (1 << #others) - 1 do
      local Z = {}
      for i = 1, #others do if m & (1 << (i - 1)) ~= 0 then Z[#Z + 1] = others[i] end end
      if g:admissible(x, y, Z) then fam[#fam + 1] = {m = m, Z = Z} end
    end
    local want = {}
    for _, a in ipairs(fam) do
      local minimal = true
      for _, b in ipairs(fam) do
        if b.m ~= a.m and (b.m & a.m) == b.m then minimal = false break end
      end
      if minimal then want[#want + 1] = key(a.Z) end
    end
    table.sort(want)
    local got = set_keys(g:adjust(x, y, {limit = 100000}))
    if table.concat(got, "|") ~= table.concat(want, "|") then
      fail(text, "g:adjust(%q, %q) = {%s}, minimal admissible sets {%s}", x, y,
           table.concat(got, "} {"), table.concat(want, "} {"))
    end
  end
end)

test("brute: the random cases cover both verdicts", function()
  -- guards against a generator that makes every check trivially agree
  local msg = string.format("admissible %d/%d, backdoor %d/%d, separated %d/%d, none %d, " ..
                            "optimal %d", stats.adm_true, stats.admissible, stats.bd_true,
                            stats.backdoor, stats.sep_true, stats.sep, stats.none, stats.optimal)
  if os.getenv("BRUTE_STATS") then print(msg) end
  for _, pair in ipairs({{stats.adm_true, stats.admissible}, {stats.bd_true, stats.backdoor},
                         {stats.sep_true, stats.sep}}) do
    if pair[1] < pair[2] // 10 or pair[1] > pair[2] - pair[2] // 10 then error(msg, 0) end
  end
  if stats.none < 20 or stats.optimal < 50 then error(msg, 0) end
end)

-- Proper paths from the set X to the set Y: only the first node is in X
-- (Shpitser et al. 2010, def. 2).  Inner nodes in Y are allowed; such a
-- path is blocked anyway once condition (ii) holds.
local function proper_paths(G, X, Y)
  local sx, out = setof(X), {}
  for _, x in ipairs(X) do
    for _, y in ipairs(Y) do
      for _, p in ipairs(paths(G, x, y)) do
        local proper = true
        for i = 2, #p.nodes do if sx[p.nodes[i]] then proper = false end end
        if proper then out[#out + 1] = p end
      end
    end
  end
  return out
end

-- The same criterion with X and Y sets: forb = de(cn), cn the nodes not in
-- X on proper causal paths; every proper non-causal path blocked.
local function sets_of_treatments()
  -- one treatment an ancestor of the other: the only proper path from X is
  -- n1 -> n2 (n0 -> n1 -> n2 passes through X), so {} is admissible
  local chain = graph "n0 -> n1; n1 -> n2"
  if chain:admissible({"n0", "n1"}, "n2", {}) ~= true then
    fail("n0 -> n1; n1 -> n2", "g:admissible({n0,n1}, n2, {}) is not true")
  end
  local checked = 0
  for _, c in ipairs(cases) do
    local G, g = c.G, c.g
    local obs = shuffle({table.unpack(G.observed)})
    if #obs >= 3 then
      local sizes = ({{2, 1}, {1, 2}, {2, 2}})[rnd(#obs >= 4 and 3 or 2)]
      local nx_, ny_ = sizes[1], sizes[2]
      local X, Y, others = {}, {}, {}
      for i = 1, nx_ do X[#X + 1] = obs[i] end
      for i = nx_ + 1, nx_ + ny_ do Y[#Y + 1] = obs[i] end
      for i = nx_ + ny_ + 1, #obs do others[#others + 1] = obs[i] end
      local P = proper_paths(G, X, Y)
      local forb = {}
      for _, p in ipairs(P) do
        if is_directed(p) then
          for i = 2, #p.nodes do for d in pairs(G.de[p.nodes[i]]) do forb[d] = true end end
        end
      end
      local family = {}
      for _, Z in ipairs(subsets(others)) do
        local want = true
        for _, z in ipairs(Z) do if forb[z] then want = false end end
        for _, p in ipairs(P) do
          if want and not is_directed(p) and is_open(G, p, setof(Z)) then want = false end
        end
        local ok = g:admissible(X, Y, Z)
        checked = checked + 1
        if ok ~= want then
          fail(c.text, "g:admissible({%s}, {%s}, {%s}) = %s, definition says %s",
               key(X), key(Y), key(Z), tostring(ok), tostring(want))
        end
        if want then family[#family + 1] = Z end
      end
      local got, want = set_keys(g:adjust(X, Y)), minimal_keys(family)
      if table.concat(got, "|") ~= table.concat(want, "|") then
        fail(c.text, "g:adjust({%s}, {%s}) = {%s}, minimal admissible sets {%s}", key(X),
             key(Y), table.concat(got, "} {"), table.concat(want, "} {"))
      end
    end
  end
  if checked < 1000 then error("only " .. checked .. " set queries", 0) end
end

-- This check runs in a child process of the same executable (which makes
-- the same cases from the same seed), so that a crash inside sluice fails
-- this test instead of ending the whole suite.
if BRUTE_CHILD then
  local ok, msg = pcall(sets_of_treatments)
  print(ok and "BRUTE-OK" or ("BRUTE-FAIL " .. tostring(msg)))
  return
end

test("brute: admissible and adjust for sets of treatments and outcomes", function()
  local exe, i = nil, -1
  while arg and arg[i] do exe = arg[i]; i = i - 1 end
  exe = exe or ((os.getenv("B") or "build") .. "/sluice")
  local me = debug.getinfo(1, "S").source:gsub("^@", "")
  local script = os.tmpname()
  local f = assert(io.open(script, "w"))
  f:write(string.format("BRUTE_CHILD = true\nfunction test() end\ndofile(%q)\n", me))
  f:close()
  local p = io.popen(string.format("%q %q 2>&1", exe, script))
  local out = p:read("a")
  local _, how, code = p:close()
  os.remove(script)
  if not out:find("BRUTE-OK", 1, true) then
    error(string.format("child %s %s (%s %s): %s", exe, script, tostring(how),
                        tostring(code), out:sub(1, 1500)), 0)
  end
end)

