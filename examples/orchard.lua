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

-- Which covariates should an analyst adjust for to estimate the effect of
-- mulching on the harvest?
print("\nEvery trail between mulch and harvest, given slope:")
print(g:trails("mulch", "harvest", {given = "slope"}))
print("\nThe minimal adjustment sets:")
print(g:adjust("mulch", "harvest"))

-- A tempting but wrong set: the moisture is a mediator and the fruit drop
-- is counted after the harvest.
print("\nWhy not {slope, soil moisture, fruit drop}?")
print(select(2, g:admissible("mulch", "harvest", {"slope", "soil moisture", "fruit drop"})))

-- The optimal set would use the pest pressure, which nobody measured.
print("\nThe optimal set O(mulch, harvest):")
print(select(2, g:optimal("mulch", "harvest")))

-- If the age of the trees is costly to record, what is the cheapest set?
print("\nCheapest set when tree age costs 3 and every other node 1:")
print(g:cheapest("mulch", "harvest", {["tree age"] = 3}))

local simpler = g:without '"fruit drop"'
print("\nWithout the post-harvest count, " .. #simpler .. " nodes remain.")

local out = os.getenv("SLUICE_DEMO_OUT") or "build"
local picture = g:draw(out .. "/orchard.svg")
print("A drawing of the graph is in " .. picture)
print("\nCaution: answers rest on the graph above; they do not replace expert judgement.")
