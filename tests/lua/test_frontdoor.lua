-- g:frontdoor and g:instruments: textbook graphs, reasons, printing and
-- bad input.  Random graphs against brute force: tests/oracle/
-- frontdoor_networkx.py and tests/c/test_frontdoor.c.

local function names(sets)
  local out = {}
  for i, s in ipairs(sets) do out[i] = "{" .. table.concat(s, ",") .. "}" end
  return out
end

local function kinds(reasons)
  local out = {}
  for i, r in ipairs(reasons) do out[i] = r.kind end
  return out
end

test("front-door: Pearl's graph, with <-> and with a hidden node", function()
  -- Pearl 2009, Causality, section 3.3.2, figure 3.5 (smoking -> tar ->
  -- cancer with a hidden genotype): {tar} is the front-door set.
  same_list(names(graph "x -> m -> y; x <-> y":frontdoor("x", "y")), {"{m}"})
  local g = graph "hidden u; u -> x; u -> y; x -> m -> y"
  same_list(names(g:frontdoor("x", "y")), {"{m}"})
  eq(g:frontdoor("x", "y", {"m"}), true, "check of {m}")
  eq(g:frontdoor("x", "y", "m"), true, "a single name")
end)

test("front-door: two mediators, in parallel and in a chain", function()
  -- by definition 3.3.3 (i): parallel paths need both, a chain either
  same_list(names(graph "x -> m1 -> y; x -> m2 -> y; x <-> y":frontdoor("x", "y")),
            {"{m1,m2}"})
  same_list(names(graph "x -> m1 -> m2 -> y; x <-> y":frontdoor("x", "y")),
            {"{m1}", "{m2}"})
  local ok, why = graph "x -> m1 -> y; x -> m2 -> y; x <-> y":frontdoor("x", "y", {"m1"})
  eq(ok, false)
  same_list(kinds(why), {"missed path"})
  eq(why[1].trail.text, "x -> m2 -> y")
end)

test("front-door: a confounder of mediator and outcome joins the set", function()
  -- worked from definition 3.3.3: {m} fails (iii) by m <- z -> y; with z
  -- in the set its arrows are cut, so {m, z} qualifies and is minimal
  local g = graph "x -> m -> y; z -> m; z -> y; x <-> y"
  same_list(names(g:frontdoor("x", "y")), {"{m,z}"})
  local ok, why = g:frontdoor("x", "y", {"m"})
  eq(ok, false)
  same_list(kinds(why), {"back-door to outcome"})
  eq(why[1].trail.text, "m <- z -> y")
  eq(why[1].node, "m")
end)

test("front-door: none, with every reason", function()
  -- the mediator shares a hidden cause with the outcome (iii), or with the
  -- treatment (ii): no front-door set (Pearl 2009, section 3.3.2)
  local g = graph "x -> m -> y; x <-> y; m <-> y"
  local sets = g:frontdoor("x", "y")
  eq(#sets, 0)
  eq(sets.none[1].kind, "no front-door set")
  eq(tostring(sets):find("no front-door set exists:", 1, true), 1)
  local g2 = graph "hidden u; u -> x; u -> m; x -> m -> y; x <-> y"
  local ok, why = g2:frontdoor("x", "y", {"m", "x"})
  eq(ok, false)
  same_list(kinds(why), {"treatment", "back-door from treatment", "back-door to outcome"})
  eq(why[2].trail.text, "x <- u -> m")
  eq(why[3].trail.text, "m <- u -> x <-> y")
  eq(why[3].trail.open, true, "open given x: x is a collider")
  eq(why[2].text:find("from the treatment to 'm' is open", 1, true) ~= nil, true)
  -- a direct edge can never be intercepted
  eq(#graph "x -> y":frontdoor("x", "y"), 0)
end)

test("front-door: no directed path gives the empty set", function()
  local sets = graph "x <- y; x <-> y":frontdoor("x", "y")
  eq(#sets, 1)
  eq(#sets[1], 0)
  eq(tostring(sets), "{} (the empty set: no directed path from the treatment to the outcome)")
end)

test("front-door: limit and printing", function()
  local g = graph "x -> a -> b -> c -> y; x <-> y"
  local all = g:frontdoor("x", "y")
  same_list(names(all), {"{a}", "{b}", "{c}"})
  eq(tostring(all), "{a}\n{b}\n{c}")
  local some = g:frontdoor("x", "y", {limit = 2})
  eq(#some, 2)
  eq(some.truncated, 2)
  eq(tostring(some):find("stopped after 2 sets (limit)", 1, true) ~= nil, true)
end)

test("front-door: bad input", function()
  local g = graph "hidden u; u -> x; u -> y; x -> m -> y"
  raises(function() return g:frontdoor("x", "x") end, "frontdoor:", "'x' is both the treatment and the outcome")
  raises(function() return g:frontdoor("u", "y") end, "frontdoor:", "'u' is hidden", "treatment")
  raises(function() return g:frontdoor("x", "y", {"m", "u"}) end, "frontdoor:", "'u' is hidden",
         "front-door set holds measured nodes only")
  raises(function() return g:frontdoor("x", "yy") end, "did you mean 'y'?")
  raises(function() return g:frontdoor({"x", "m"}, "y") end, "frontdoor:", "treatment must be one node")
  raises(function() return g:frontdoor("x", "y", {limt = 3}) end, "unknown option 'limt'; did you mean 'limit'?")
  raises(function() return g:frontdoor("x", "y", {limit = 0}) end, "limit = 0 must be a whole number")
end)

test("instruments: the IV graph and a conditional instrument", function()
  -- Brito and Pearl 2002 (UAI), figure 1 (from memory): z -> x -> y with
  -- x <-> y: z is an instrument given {}
  local g = graph "z -> x -> y; x <-> y"
  local ivs = g:instruments("x", "y")
  eq(#ivs, 1)
  eq(ivs[1].z, "z")
  eq(#ivs[1].given, 0)
  eq(tostring(ivs), "z  given {}")
  eq(g:instruments("x", "y", "z", {}), true)
  -- a conditional instrument (Brito and Pearl 2002; van der Zander, Textor
  -- and Liskiewicz 2015, section 2, from memory): z <- w -> y, z -> x
  local g2 = graph "w -> z; w -> y; z -> x -> y; x <-> y"
  ivs = g2:instruments("x", "y")
  eq(#ivs, 1)
  eq(ivs[1].z, "z")
  same_list(ivs[1].given, {"w"})
  eq(g2:instruments("x", "y", "z", {"w"}), true)
  local ok, why = g2:instruments("x", "y", "z", {})
  eq(ok, false)
  same_list(kinds(why), {"open to outcome"})
  eq(why[1].trail.text, "z <- w -> y")
  eq(why[1].trail.open, true)
end)

test("instruments: the total effect through a mediator", function()
  -- z -> x -> m -> y, x <-> y: 2SLS with z gives the total effect, so z
  -- counts (the arrows from x into its causal paths are set aside)
  local g = graph "z -> x -> m -> y; x <-> y"
  local ivs = g:instruments("x", "y")
  eq(#ivs, 1)
  eq(ivs[1].z, "z")
  -- conditioning on the mediator is refused with its reason
  local ok, why = g:instruments("x", "y", "z", {"m"})
  eq(ok, false)
  eq(why[1].kind, "forbidden")
  eq(why[1].node, "m")
  -- a candidate with no tie to x
  ok, why = graph "z; x -> y; x <-> y":instruments("x", "y", "z", {})
  eq(ok, false)
  same_list(kinds(why), {"not relevant"})
  eq(tostring(graph "x -> y; x <-> y":instruments("x", "y")), "no conditional instrument exists")
end)

test("instruments: bad input", function()
  local g = graph "hidden u; u -> x; u -> y; z -> x -> y; w -> z"
  raises(function() return g:instruments("x", "x") end, "instruments:", "both the treatment and the outcome")
  raises(function() return g:instruments("x", "y", "u") end, "instruments:", "'u' is hidden", "must be measured")
  raises(function() return g:instruments("x", "y", "z", {"u"}) end, "'u' is hidden")
  raises(function() return g:instruments("x", "y", "z", {"y"}) end, "'y' is the outcome")
  raises(function() return g:instruments("x", "y", "x") end, "'x' is the treatment")
  raises(function() return g:instruments("x", "y", "zz") end, "did you mean 'z'?")
  raises(function() return g:instruments("u", "y") end, "'u' is hidden")
  raises(function() return g:instruments("x", "y", {limit = 1}, {"w"}) end, "takes no given set")
  eq(#g:instruments("x", "y", {limit = 1}), 1)
end)
