-- orchard.lua: a first tour of sluice on an invented orchard.
-- Run it with:  build/sluice examples/orchard.lua   (or: make demo)
local here = (arg and arg[0] or "examples/orchard.lua"):match("^(.*)/") or "."
local g = read_graph(here .. "/orchard.graph")

print("The orchard graph, in sluice notation:")
print(g)
print("The same graph as a terminal view:")
print(g:show())

print("\nWhat points into the harvest?   ", g:parents "harvest")
print("Everything upstream of mulching: ", g:ancestors "mulch")
print("Everything mulching can change:  ", g:descendants "mulch")
print("Never measured:                  ", g:hidden())

-- "fruit drop" is counted after the harvest: it is a consequence of the
-- outcome, and a later issue's adjustment tools will warn against it.
local simpler = g:without '"fruit drop"'
print("\nWithout the post-harvest count, " .. #simpler .. " nodes remain.")

local out = os.getenv("SLUICE_DEMO_OUT") or "build"
local picture = g:draw(out .. "/orchard.svg")
print("A drawing of the graph is in " .. picture)
print("\nCaution: answers rest on the graph above; they do not replace expert judgement.")
