-- bench_estimate.lua: the estimator benchmarks of bench/run.sh, run by the
-- shell (build/sluice bench/bench_estimate.lua MODE CSV ...).
--
--   gen CSV N SEED    write N rows of simulated data: w1..w6 standard
--                     normal, t Bernoulli with P(t = 1) a logistic in the
--                     w's, y linear in t, the w's and t:w1, plus noise
--   read CSV          read the file only (the time to subtract)
--   standardize CSV B SEED
--   aipw CSV B SEED   read the file, then one estimate{} of the effect of t
--                     on y adjusted for w1..w6 with B bootstrap replicates
--
-- The estimating modes print one line of key=value pairs: the point
-- estimate (on all the rows), the bootstrap SE and interval, the number of
-- replicates that succeeded and of rows used.  bench/run.sh times each run
-- from outside with a wall clock.

local mode, path = arg[1], arg[2]
if not mode or not path then
  io.stderr:write("usage: bench_estimate.lua gen CSV N SEED | read CSV | standardize CSV B SEED | aipw CSV B SEED\n")
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
  local a = {0.4, -0.3, 0.2, 0.25, -0.15, 0.1}     -- propensity coefficients
  local b = {1.0, 0.5, -0.7, 0.3, 0.8, -0.4}       -- outcome coefficients
  local f = assert(io.open(path, "w"))
  f:write("w1,w2,w3,w4,w5,w6,t,y\n")
  local w, buf = {}, {}
  for i = 1, n do
    local lp, my = 0.1, 1.0
    for j = 1, 6 do
      w[j] = normal()
      lp = lp + a[j] * w[j]
      my = my + b[j] * w[j]
    end
    local t = math.random() < 1 / (1 + math.exp(-lp)) and 1 or 0
    local y = my + 2 * t + 0.5 * t * w[1] + normal()
    buf[#buf + 1] = string.format("%.12g,%.12g,%.12g,%.12g,%.12g,%.12g,%d,%.12g\n",
                                  w[1], w[2], w[3], w[4], w[5], w[6], t, y)
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
if mode ~= "standardize" and mode ~= "aipw" then
  io.stderr:write("bench_estimate.lua: unknown mode '" .. mode .. "'\n")
  os.exit(2)
end

local B, seed = math.tointeger(tonumber(arg[3] or "200")), math.tointeger(tonumber(arg[4] or "1"))
local r = estimate{data = d, treatment = "t", outcome = "y",
                   set = {"w1", "w2", "w3", "w4", "w5", "w6"},
                   method = mode, boot = B, seed = seed}
print(string.format("estimate=%.17g se=%.17g lo=%.17g hi=%.17g boot=%d boot_failed=%d n=%d " ..
                    "se_analytic=%.6g", r.estimate, r.se, r.lo, r.hi, r.boot, r.boot_failed, r.n,
                    r.se_analytic or 0 / 0))
