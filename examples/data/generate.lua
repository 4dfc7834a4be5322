-- Writes the INVENTED demo data files in this folder.  Each is a stated law
-- plus seeded noise (the LCG below, so every Lua gives the same bytes).
-- Run from the repository root:  lua5.4 examples/data/generate.lua
if not pcall(require, "segwise") then
  package.path = "./lua/?.lua;./lua/?/init.lua;" .. package.path
  package.cpath = "./build/?.so;" .. package.cpath
end
local sw = require "segwise"

-- Park-Miller style LCG: uniform numbers in [-0.5, 0.5), reproducible.
local function noise(seed)
  local s = seed
  return function()
    s = (1103515245 * s + 12345) % 2147483648
    return s / 2147483648 - 0.5
  end
end

local function write(name, header, comment, rows)
  local f = assert(io.open("examples/data/" .. name, "w"))
  f:write("# INVENTED demo data, not a measurement: ", comment, "\n")
  f:write(header, "\n")
  for _, r in ipairs(rows) do f:write(("%.6g,%.6g\n"):format(r[1], r[2])) end
  f:close()
end

-- White LED: v(i) of a Shockley diode with series resistance.
do
  local law = sw.curve.diode { is = 2e-18, n = 3.0, vt = 0.02585, rs = 6, x = "i" }
  local u, rows = noise(11), {}
  for k = 1, 40 do
    local i = k * 1e-3
    rows[#rows + 1] = { i * 1e3, law(i) + 0.004 * u() }
  end
  write("led_white.csv", "I_mA,V_V",
    "v(i) of a diode law is=2e-18 A, n=3.0, vt=25.85 mV, rs=6 ohm, plus uniform noise of "
      .. "+-2 mV (LCG seed 11)", rows)
end

-- Schottky diode: i(v), relative noise.
do
  local law = sw.curve.diode { is = 5e-7, n = 1.05, vt = 0.02585, rs = 0.08, x = "v" }
  local u, rows = noise(23), {}
  for k = 0, 70 do
    local v = 0.10 + 0.005 * k
    rows[#rows + 1] = { v, law(v) * 1e3 * (1 + 0.01 * u()) }
  end
  write("schottky_iv.csv", "V_V,I_mA",
    "i(v) of a diode law is=0.5 uA, n=1.05, vt=25.85 mV, rs=80 mohm, times (1 + uniform "
      .. "noise of +-0.5 %) (LCG seed 23)", rows)
end

-- Silicon rectifier diode: i(v) from 0 V, relative noise plus a 1 uA floor.
do
  local law = sw.curve.diode { is = 4e-9, n = 1.9, vt = 0.02585, rs = 0.05, x = "v" }
  local u, rows = noise(37), {}
  for k = 0, 40 do
    local v = 0.025 * k
    local i = law(v)
    rows[#rows + 1] = { v, (i * (1 + 0.01 * u()) + 1e-6 * u()) * 1e3 }
  end
  write("rectifier_iv.csv", "V_V,I_mA",
    "i(v) of a diode law is=4 nA, n=1.9, vt=25.85 mV, rs=50 mohm, times (1 + uniform noise "
      .. "of +-0.5 %), plus uniform noise of +-0.5 uA (LCG seed 37)", rows)
end
