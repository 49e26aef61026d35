--@ sluice 0.1.0 session log
--@ started 2026-01-01T00:00:00Z
--@ lua 5.4
--@ in 1 (1 line)
t = read_csv 'orchard.csv'
--@ data orchard.csv 177 4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a4a
--@ in 2 show (1 line)
show(#t)
--| 8
--@ in 3 (4 lines)
s = [[
--@ in 99
--| forged
]]
--@ in 4 skipped (1 line): does not compile
--> x = = 1
--| error: unexpected symbol near '='
--@ in 5 (1 line)
print(cell)
--| a\rb
--| \e[1m
--|
--@ in 6 show (1 line)
show(g:draw('pic.svg'))
--| pic.svg
--@ picture pic.svg
--@ in 7 show (2 lines)
show(f(1) -- note
)
--| 1
