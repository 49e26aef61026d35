-- g:optimal with hidden nodes and <-> edges, checked against the variance it
-- claims to minimise.  The asymptotic variance of the least-squares
-- coefficient of x in y ~ x + Z, for a valid Z, is
--   sigma^2(y | x, Z) / (n sigma^2(x | Z))
-- (Henckel, Perkovic and Maathuis 2022, JRSS B 84, section 3; the usual
-- OLS formula, residual variance over the residual variance of x given the
-- other regressors), computed here from the implied covariance m:cov() by
-- Gaussian elimination, independently of sluice's C code.

-- residual variance of a given the names in b, from a covariance table
local function resvar(C, a, b)
  local k = #b
  if k == 0 then return C[a][a] end
  local M = {}
  for i = 1, k do
    M[i] = {}
    for j = 1, k do M[i][j] = C[b[i]][b[j]] end
    M[i][k + 1] = C[b[i]][a]
  end
  for c = 1, k do
    local p = c
    for r = c + 1, k do if math.abs(M[r][c]) > math.abs(M[p][c]) then p = r end end
    M[c], M[p] = M[p], M[c]
    for r = c + 1, k do
      local f = M[r][c] / M[c][c]
      for j = c, k + 1 do M[r][j] = M[r][j] - f * M[c][j] end
    end
  end
  local sol = {}
  for r = k, 1, -1 do
    local s = M[r][k + 1]
    for j = r + 1, k do s = s - M[r][j] * sol[j] end
    sol[r] = s / M[r][r]
  end
  local v = C[a][a]
  for i = 1, k do v = v - sol[i] * C[b[i]][a] end
  return v
end

local function avar(C, x, y, Z)
  local s = {x}
  for _, z in ipairs(Z) do s[#s + 1] = z end
  return resvar(C, y, s) / resvar(C, x, Z)
end

local function key(s) return "{" .. table.concat(s, ",") .. "}" end

-- The case of issue 10: y <-> w.  {w} is valid (x and w are m-separated
-- given nothing) and sharpens y; with Var = 1 for every error and
-- cov(e_y, e_w) = 0.8: sigma^2(y | x) = 1, sigma^2(y | x, w) = 1 - 0.8^2 =
-- 0.36, sigma^2(x) = 1, so the variances are 1.0 (empty set) and 0.36 ({w}),
-- worked by hand.
test("optimal: y <-> w gives {w}, with variance 0.36 against 1.0", function()
  local g = graph "x -> y; y <-> w"
  same_list(g:optimal("x", "y"), {"w"})
  local m = sem(g, {["x -> y"] = 1}, {cov = {["y <-> w"] = 0.8}})
  local C = m:cov()
  eq(math.abs(avar(C, "x", "y", {}) - 1.0) < 1e-12, true, "variance of {}")
  eq(math.abs(avar(C, "x", "y", {"w"}) - 0.36) < 1e-12, true, "variance of {w}")
  -- the same model with the hidden common cause written out
  local h = graph "hidden u; x -> y; u -> y; u -> w"
  same_list(h:optimal("x", "y"), {"w"})
  -- through a chain of hidden nodes and a <-> edge between hidden nodes
  local h2 = graph "hidden u, v, t; x -> y; u -> y; u -> v; v -> w; t <-> u; t -> k"
  same_list(h2:optimal("x", "y"), {"k", "w"})
end)

-- Without <-> edges and hidden nodes the answer is Henckel, Perkovic and
-- Maathuis's O = pa(cn) \ forb (their definition 3.9): cn = {m, y},
-- pa(cn) = {x, c, m, b}, forb = {x, m, y}, by hand.
test("optimal: plain DAGs keep pa(cn) \\ forb", function()
  same_list(graph("a -> x; x -> m -> y; c -> m; b -> y; a -> b"):optimal("x", "y"), {"b", "c"})
end)

-- The district of y walked through <-> edges and the parents of its members
-- (the collider paths of Runge 2021, from memory): y <-> c <-> d, p -> d.
test("optimal: the collider walk gathers the district and its parents", function()
  local g = graph "x -> y; y <-> c; c <-> d; p -> d"
  same_list(g:optimal("x", "y"), {"c", "d", "p"})
  -- a node joined to y only through a descendant of x cannot be used:
  -- x -> d <-> y, so {d} opens x -> d <-> y; {} is the only valid set
  same_list(graph("x -> d; d <-> y; x -> y"):optimal("x", "y"), {})
  -- x <- b <- e <-> y: {b} and {e} are valid; {e} is optimal, since x and
  -- e are separated given b and y and b are separated given x and e
  same_list(graph("x <- b; b <- e; e <-> y; x -> y"):optimal("x", "y"), {"e"})
end)

test("optimal: no optimal set, and why", function()
  -- x <- a -> c <-> y: {c} needs {a} (x <- a -> c <-> y opens at c), and
  -- a informs x; {} and {a, c} each win in some model (checked below)
  local g = graph "x <- a; a -> c; c <-> y; x -> y"
  local o, why = g:optimal("x", "y")
  eq(o, nil)
  eq(why[1].kind, "trade-off"); eq(why[1].node, "a"); eq(why[1].via, "c")
  same_list(why[1].rival, {})
  eq(why[1].trail.text, "x <- a")
  eq(tostring(why):find("'a' sharpens the outcome", 1, true) ~= nil, true, tostring(why))
  eq(tostring(why):find("{a, c} and {} each have the smaller variance", 1, true) ~= nil, true)
  -- both directions, by hand-picked coefficients
  local strong = sem(g, {["a -> x"] = 0.1, ["a -> c"] = 1, ["x -> y"] = 1}, {cov = {["c <-> y"] = 0.9}})
  local weak = sem(g, {["a -> x"] = 3, ["a -> c"] = 1, ["x -> y"] = 1}, {cov = {["c <-> y"] = 0.1}})
  local C1, C2 = strong:cov(), weak:cov()
  eq(avar(C1, "x", "y", {"a", "c"}) < avar(C1, "x", "y", {}), true, "{a, c} wins")
  eq(avar(C2, "x", "y", {}) < avar(C2, "x", "y", {"a", "c"}), true, "{} wins")
  -- no valid set: the hidden parent is named first
  local h = graph "hidden u; u -> y; u -> x; x -> y"
  local none, why2 = h:optimal("x", "y")
  eq(none, nil)
  eq(why2[1].kind, "hidden"); eq(why2[1].node, "u")
  eq(why2[2].kind, "no valid set")
  eq(why2[3].kind, "open"); eq(why2[3].trail.text, "x <- u -> y")
  local _, why3 = graph("x -> y; x <-> y"):optimal("x", "y")
  eq(why3[1].kind, "no valid set")
  local _, why4 = graph("x -> z; y -> z"):optimal("x", "y")
  eq(why4[1].kind, "no causal path")
end)

-- Regression: a trade-off found among the minimal sets stopped the listing,
-- and its stop value was taken for an error code (g:optimal raised garbage).
test("optimal: a rival among the minimal sets is no error", function()
  local g = graph [[hidden u1, u2; v1 <-> v2; v1 -> v3; v1 -> v5; v1 -> v6; v1 -> u1
    v2 -> v4; v2 -> v6; v2 -> u1; v3 <-> v5; v3 -> v6; v3 -> u1; v4 -> v5; v4 -> u2
    v5 -> u2; v5 <-> v7; v6 -> v7; u1 -> u2]]
  local o, why = g:optimal("v6", "v7")
  eq(o, nil)
  eq(why[1].kind, "trade-off"); eq(why[1].node, "v1")
  same_list(why[1].rival, {})   -- the empty set, found by the listing
end)

-- The numeric oracle: random graphs with hidden nodes and <-> edges, random
-- linear models.  Every valid set is found by enumerating subsets of the
-- observed nodes and asking g:admissible (itself checked against the
-- definition in test_brute.lua).  When g:optimal returns a set, its
-- variance must be at most every valid set's (relative 1e-9) in every
-- draw; when it names a trade-off, the rival must be valid, and draws
-- must be found where the returned set and the rival each have the
-- strictly smaller variance.
local seed = 2021
local function rnd()   -- an LCG (Numerical Recipes constants)
  seed = (seed * 1664525 + 1013904223) % 4294967296
  return seed / 4294967296
end

local function has_kind(why, kind)
  for _, r in ipairs(why) do if r.kind == kind then return true end end
  return false
end

local function random_case()
  local n = 4 + math.floor(rnd() * 4)
  local nh = math.floor(rnd() * 2.5)
  local all, text, dir, bi = {}, {}, {}, {}
  for i = 1, n do all[#all + 1] = "v" .. i end
  for i = 1, nh do table.insert(all, math.floor(rnd() * #all) + 1, "u" .. i) end
  if nh > 0 then
    local hs = {}
    for i = 1, nh do hs[i] = "u" .. i end
    text[1] = "hidden " .. table.concat(hs, ", ")
  end
  for _, v in ipairs(all) do text[#text + 1] = v end
  for i = 1, #all do
    for j = i + 1, #all do
      local r = rnd()
      if r < 0.35 then
        dir[#dir + 1] = all[i] .. " -> " .. all[j]
        text[#text + 1] = dir[#dir]
      elseif r < 0.47 and not all[i]:match("^u") and not all[j]:match("^u") then
        bi[#bi + 1] = {all[i], all[j]}
        text[#text + 1] = all[i] .. " <-> " .. all[j]
      end
    end
  end
  local obs = {}
  for _, v in ipairs(all) do if not v:match("^u") then obs[#obs + 1] = v end end
  return table.concat(text, "; "), all, obs, dir, bi
end

-- A random linear model: coefficients of magnitude 10^U(-1.8, 0.5), error
-- covariances scaled by the <-> degree to stay positive definite (a draw
-- that is not is skipped).
local function random_model(g, dir, bi)
  local coefs, cov, deg = {}, {}, {}
  for _, e in ipairs(dir) do
    coefs[e] = (rnd() < 0.5 and -1 or 1) * 10 ^ (rnd() * 2.3 - 1.8)
  end
  for _, e in ipairs(bi) do
    deg[e[1]] = (deg[e[1]] or 0) + 1
    deg[e[2]] = (deg[e[2]] or 0) + 1
  end
  for _, e in ipairs(bi) do
    cov[e[1] .. " <-> " .. e[2]] = (rnd() < 0.5 and -1 or 1) * (0.2 + 0.75 * rnd()) /
                                   math.max(deg[e[1]], deg[e[2]])
  end
  local ok, m = pcall(sem, g, coefs, {cov = cov})
  return ok and m or nil
end

test("optimal: numeric oracle on random graphs with hidden nodes", function()
  local st = {optimal = 0, tradeoff = 0, novalid = 0, draws = 0}
  for _ = 1, 1500 do
    local text, _, obs, dir, bi = random_case()
    local g = graph(text)
    local x = obs[math.floor(rnd() * #obs) + 1]
    local de = {}
    for _, v in ipairs(g:descendants(x)) do de[#de + 1] = v end
    local y = #de > 0 and de[math.floor(rnd() * #de) + 1] or nil
    do
      local hid = {}
      for _, h in ipairs(g:hidden()) do hid[h] = true end
      if y and not hid[y] then
        local others, valid = {}, {}
        for _, v in ipairs(obs) do if v ~= x and v ~= y then others[#others + 1] = v end end
        for mask = 0, (1 << #others) - 1 do
          local Z = {}
          for i = 1, #others do if mask & (1 << (i - 1)) ~= 0 then Z[#Z + 1] = others[i] end end
          if g:admissible(x, y, Z) then valid[#valid + 1] = Z end
        end
        local O, why = g:optimal(x, y)
        if O then
          st.optimal = st.optimal + 1
          eq(g:admissible(x, y, O), true, text .. ": " .. key(O) .. " is valid")
          for _ = 1, 6 do
            local m = random_model(g, dir, bi)
            if m then
              st.draws = st.draws + 1
              local C = m:cov()
              local vo = avar(C, x, y, O)
              for _, Z in ipairs(valid) do
                if vo > avar(C, x, y, Z) * (1 + 1e-9) then
                  error(string.format("%s, x = %s, y = %s: %s has variance %.6g, above %s's %.6g",
                                      text, x, y, key(O), vo, key(Z), avar(C, x, y, Z)))
                end
              end
            end
          end
        elseif has_kind(why, "no valid set") then
          st.novalid = st.novalid + 1
          eq(#valid, 0, text .. ": g:optimal says no valid set")
        else
          st.tradeoff = st.tradeoff + 1
          local r = why[1]
          eq(r.kind, "trade-off", text .. ": the reason")
          eq(g:admissible(x, y, r.rival), true, text .. ": the rival " .. key(r.rival))
          -- the set the reasons speak of is the gathered O (printed in the text)
          local Oset = {}
          for name in tostring(why):match("leaves open without it: {([^}]*)}"):gmatch("[^, ]+") do
            Oset[#Oset + 1] = name
          end
          -- ... and no valid set has the smallest variance in every draw
          local o_wins, rival_wins, always = false, false, {}
          for k = 1, #valid do always[k] = true end
          local left = #valid
          for _ = 1, 400 do
            local m = random_model(g, dir, bi)
            if m then
              local C = m:cov()
              local a, b = avar(C, x, y, Oset), avar(C, x, y, r.rival)
              if a < b * (1 - 1e-9) then o_wins = true end
              if b < a * (1 - 1e-9) then rival_wins = true end
              local v, best = {}, math.huge
              for k, Z in ipairs(valid) do v[k] = avar(C, x, y, Z); best = math.min(best, v[k]) end
              for k = 1, #valid do
                if always[k] and v[k] > best * (1 + 1e-9) then always[k] = false; left = left - 1 end
              end
              if o_wins and rival_wins and left == 0 then break end
            end
          end
          if not (o_wins and rival_wins) or left > 0 then
            error(string.format("%s, x = %s, y = %s: %s against %s: %s in 400 draws", text, x, y,
                                key(Oset), key(r.rival), left > 0 and "a set is always best"
                                or "only one wins"))
          end
        end
      end
    end
  end
  -- the oracle must have had work of each kind
  eq(st.optimal > 600 and st.tradeoff >= 15 and st.novalid >= 40, true,
     string.format("optimal %d, trade-off %d, no valid set %d", st.optimal, st.tradeoff, st.novalid))
end)
