--@ sluice 0.1.0 session log
--@ started 2026-01-01T00:00:00Z
--@ lua 5.4
os.execute('x')
--@ in 1 (1 line)
x = 1
--| 1os.exit()
--[[
