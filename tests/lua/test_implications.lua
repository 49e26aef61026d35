-- g:implications: the shapes g:test reads, printing, the local list, limit
-- and bad input.  Random graphs against brute force: tests/oracle/
-- implications_networkx.py and tests/c/test_implications.c.

local function lines(r)
  local out = {}
  for i, t in ipairs(r) do
    out[i] = t.a .. " _ " .. t.b .. (#t.given > 0 and " | " .. table.concat(t.given, ",") or "")
  end
  return out
end

test("implications: chain, collider, fork", function()
  -- Pearl 2009, Causality, section 1.2.3: a chain and a fork are blocked
  -- at the middle node, a collider unconditioned
  same_list(lines(graph "a -> b -> c":implications()), {"a _ c | b"})
  same_list(lines(graph "a -> c <- b":implications()), {"a _ b"})
  same_list(lines(graph "b <- a -> c":implications()), {"b _ c | a"})
  local r = graph "a -> b -> c":implications()
  eq(r[1].a, "a"); eq(r[1].b, "c"); eq(r[1].given[1], "b"); eq(#r[1].given, 1)
  eq(r.untestable, 0, "untestable")
  eq(math.type(r.untestable), "integer")
  eq(tostring(r), "a ⊥ c | b")
  eq(tostring(r[1]), "a ⊥ c | b")
  eq(tostring(graph "a -> c <- b":implications()), "a ⊥ b")
end)

test("implications: the M-graph, measured and not", function()
  -- Greenland, Pearl and Robins 1999 (Pearl 2009, section 11.3.3); each set
  -- worked by hand from definition 1.2.3: minimal, the parents of the later
  -- node (in g:order()) when they separate
  local g = graph "u1 -> x; u1 -> m; u2 -> m; u2 -> y; x -> y"
  same_list(lines(g:implications()),
            {"u1 _ u2", "u2 _ x", "m _ x | u1", "u1 _ y | x", "m _ y | u2,x"})
  eq(tostring(g:implications()), "u1 ⊥ u2\nu2 ⊥ x\nm ⊥ x | u1\nu1 ⊥ y | x\nm ⊥ y | u2, x")
  -- with u1 and u2 unmeasured nothing is left to test: m is joined to x and
  -- to y by hidden causes
  local h = graph "hidden u1, u2; u1 -> x; u1 -> m; u2 -> m; u2 -> y; x -> y"
  local r = h:implications()
  eq(#r, 0); eq(r.untestable, 2)
  eq(tostring(r), "2 pairs are not adjacent but no measured set separates them: the hidden nodes join them")
end)

test("implications: Verma's graph leaves one pair untestable", function()
  -- a -> b -> c -> d, b <-> d: a and d are separated by no measured set
  -- (Verma and Pearl 1990; from memory)
  local r = graph "a -> b -> c -> d; b <-> d":implications()
  same_list(lines(r), {"a _ c | b"})
  eq(r.untestable, 1)
  eq(tostring(r), "a ⊥ c | b\n1 pair is not adjacent but no measured set separates it: the hidden nodes join the two")
  eq(tostring(graph "x -> m -> y; x <-> y":implications()), "(none: every two observed nodes are adjacent)")
end)

test("implications: the local Markov list, grouped by node", function()
  -- Pearl 2009, section 1.2.3 (the parents screen a node off from its
  -- other non-descendants)
  local r = graph "a -> b -> c -> d":implications({basis = "local"})
  same_list(lines(r), {"c _ a | b", "d _ a | c", "d _ b | c"})
  eq(r.basis, "local")
  eq(tostring(r), "c ⊥ a | b\nd ⊥ a, b | c")
  eq(tostring(graph "a -> c <- b":implications({basis = "local"})), "a ⊥ b\nb ⊥ a")
  eq(tostring(graph "a -> b":implications({basis = "local"})),
     "(none: no node has a non-descendant outside its parents)")
  eq(graph "a -> b -> c":implications({basis = "pairs"}).basis, "pairs")
end)

test("implications: names are written as the notation writes them", function()
  local r = graph '"soil pH" -> yield -> "bee visits"':implications()
  eq(tostring(r), '"soil pH" ⊥ "bee visits" | yield')
  eq(r[1].a, "soil pH")
end)

test("implications: limit stops the listing with a note", function()
  local g = graph "a; b; c; d; e"
  eq(#g:implications(), 10)
  local r = g:implications({limit = 3})
  eq(#r, 3); eq(r.truncated, 3)
  eq(tostring(r), "a ⊥ b\na ⊥ c\nb ⊥ c\n... stopped after 3 implications (limit); later pairs were not examined")
  eq(#g:implications({limit = 3.0}), 3)
  eq(#g:implications({basis = "local", limit = 2}), 2)
end)

test("implications: bad input", function()
  local g = graph "hidden u; u -> x; u -> y; z -> x"
  raises(function() return g:implications({basis = "local"}) end,
         "implications:", 'basis = "local"', "'u' is hidden")
  raises(function() return graph "x -> y; y <-> z":implications({basis = "local"}) end,
         "implications:", "'y' <-> 'z'")
  raises(function() return g:implications({basis = "locl"}) end,
         "implications:", 'basis = "locl" is unknown; did you mean "local"?')
  raises(function() return g:implications({basis = "markov blanket"}) end,
         "implications:", '"pairs" or "local"')
  raises(function() return g:implications({basis = 1}) end, "implications:", "basis = must be")
  raises(function() return g:implications({limt = 3}) end, "implications:", "did you mean 'limit'?")
  raises(function() return g:implications({limit = 0}) end, "implications:", "limit = 0 must be a whole number")
  raises(function() return g:implications({limit = 2.5}) end, "implications:", "limit = 2.5")
  raises(function() return g:implications("local") end, "implications:", "options are a table")
end)
