--@ sluice 0.1.0 session log
--@ started 2026-01-01T00:00:00Z
--@ lua 5.4
--@ in 1
x = 41
--@ in 2 show
show(x + 1)
--| 42
--@ in 3 skipped: does not compile
--> x = = 1
--| error: unexpected symbol
--@ in 4
s = [[
--@ in 99
]]
--@ data a b.csv 3 ff
--@ picture p.svg
