-- bench_routes.lua: the front-door and IV benchmarks of bench/run.sh, run
-- by the shell (build/sluice bench/bench_routes.lua MODE CSV ...).
--
--   gen CSV N SEED    write N rows of simulated data: u hidden (not
--                     written), w a standard normal covariate, z an
--                     instrument, x = 1 when 0.8 z + 0.5 w + u + noise > 0,
--                     m = 0.9 x + noise, y = 0.7 m + u + noise: z is an
--                     instrument given w and {m} a front-door set
--   read CSV          read the file only (the time to subtract)
--   iv CSV B SEED     2SLS of y on x instrumented by z given w
--   frontdoor CSV B SEED
--                     the front-door estimate through m
--
-- Each estimating mode prints one line of key=value pairs: the point
-- estimate (on all the rows), the bootstrap SE, replicates that succeeded.

local mode, path = arg[1], arg[2]
if not mode or not path then
  io.stderr:write("usage: bench_routes.lua gen CSV N SEED | read CSV | iv CSV B SEED | frontdoor CSV B SEED\n")
  os.exit(2)
end

if mode == "gen" then
  local n, seed = math.tointeger(tonumber(arg[3])), math.tointeger(tonumber(arg[4]) or 1)
  math.randomseed(seed)
  -- a standard normal by Box-Muller (one of the pair; 1 - u keeps log finite)
  local function normal()
    local u1, u2 = 1 - math.random(), math.random()
    return math.sqrt(-2 * math.log(u1)) * math.cos(2 * math.pi * u2)
  end
  local f = assert(io.open(path, "w"))
  f:write("w,z,x,m,y\n")
  local buf = {}
  for i = 1, n do
    local u, w, z = normal(), normal(), normal()
    local x = 0.8 * z + 0.5 * w + u + normal() > 0 and 1 or 0
    local m = 0.9 * x + normal()
    local y = 0.7 * m + u + normal()
    buf[#buf + 1] = string.format("%.12g,%.12g,%d,%.12g,%.12g\n", w, z, x, m, y)
    if #buf == 1000 then f:write(table.concat(buf)); buf = {} end
  end
  f:write(table.concat(buf))
  f:close()
  print(string.format("rows=%d", n))
  return
end

local d = read_csv(path)
if mode == "read" then
  print(string.format("rows=%d", #d))
  return
end
local B, seed = math.tointeger(tonumber(arg[3] or "200")), math.tointeger(tonumber(arg[4] or "1"))
local r
if mode == "iv" then
  r = estimate{data = d, treatment = "x", outcome = "y", method = "iv", instrument = "z",
               set = {"w"}, boot = B, seed = seed}
elseif mode == "frontdoor" then
  r = estimate{data = d, treatment = "x", outcome = "y", method = "frontdoor", via = {"m"},
               boot = B, seed = seed}
else
  io.stderr:write("bench_routes.lua: unknown mode '" .. mode .. "'\n")
  os.exit(2)
end
print(string.format("estimate=%.17g se=%.17g boot=%d boot_failed=%d n=%d",
                    r.estimate, r.se, r.boot, r.boot_failed, r.n))
