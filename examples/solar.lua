-- A 36-cell solar module charging a 12 V battery through a blocking
-- Schottky diode, across irradiance levels from dark to full sun.  The
-- module is a photocurrent source in parallel with its dark diode and a
-- shunt resistance (the usual one-diode picture); both diodes become PWL
-- models, the photocurrent is swept.  Values are invented but typical.
--   lua5.4 examples/solar.lua
local sw, say = dofile("examples/preamble.lua") { ... }

local CELLS, ISC_STC = 36, 5.0           -- cells in series; photocurrent at 1000 W/m^2
-- module shunt (ohm), wiring + battery (ohm), battery EMF (V)
local RSH, RW, VBAT = 150, 0.1, 12.6
local DARK = { is = 1e-7, n = 1.3 * CELLS, vt = 0.02585 }         -- the module's cells as one diode
local BLOCK = { is = 2e-6, n = 1.1, vt = 0.02585, rs = 0.02 }     -- Schottky blocking diode

-- Both laws give i(v); each is fitted over the voltages it will see.
local dark_law = sw.curve.diode { is = DARK.is, n = DARK.n, vt = DARK.vt, x = "v" }
local block_law = sw.curve.diode { is = BLOCK.is, n = BLOCK.n, vt = BLOCK.vt, rs = BLOCK.rs,
                                   x = "v" }
-- Both pass through the origin, so the night-time currents stay right.
local dark = sw.fit(dark_law, { lo = 0, hi = 22, tol = 0.005, through = { { 0, 0 } } })
-- The blocking diode: its forward side by the fit, its reverse side (flat
-- leakage down to -14 V) one more knot added by hand.
local fwd = sw.fit(block_law, { lo = 0, hi = 0.65, tol = 0.01, through = { { 0, 0 } } })
local xs, ys = fwd:knots()
table.insert(xs, 1, -14)
table.insert(ys, 1, block_law(-14))
local block = sw.pwl { x = xs, y = ys }
say(("dark diode: %d segments on 0 .. 22 V within 5 mA; blocking diode: %d segments on "
  .. "-14 .. 0.65 V\n"):format(
  dark:nseg(), block:nseg()))

local net = sw.network()
net:isource("IPH", "gnd", "pv", 0)                   -- photocurrent into the module's + terminal
net:element("DARK", "pv", "gnd", dark, { exact = dark_law })
net:resistor("RSH", "pv", "gnd", RSH)
net:element("DB", "pv", "b", block, { exact = block_law })
net:resistor("RW", "b", "bt", RW)
net:vsource("VBAT", "bt", "gnd", VBAT)

local suns = { 0, 10, 25, 50, 100, 200, 400, 600, 800, 1000 }   -- irradiance, W/m^2
local iph = {}
for k, g in ipairs(suns) do iph[k] = ISC_STC * g / 1000 end
local ops = net:sweep("IPH", iph)                           -- one call, warm-started in C

local rows = {}
for k, op in ipairs(ops) do
  net:set("IPH", iph[k])
  local ex = net:solve { exact = true }
  rows[k] = { g = suns[k], iph = iph[k], v_pv = op.v.pv, v_db = op.vd.DB, i = op.i.DB,
              i_exact = ex.i.DB, p_bat = op.i.DB * VBAT, p_db = op.p.DB, p_pv = op.v.pv * op.i.DB,
              state = op.i.DB > 1e-3 and "charging" or "blocked" }
end
net:set("IPH", 0)

say(("battery %s through %s, module shunt %s"):format(sw.si(VBAT, "V"), sw.si(RW, "Ω"),
  sw.si(RSH, "Ω")))
say(sw.report.table(rows, {
  { name = "irradiance", key = "g", fmt = "%d", unit = "W/m²" },
  { name = "I photo", key = "iph", unit = "A" },
  { name = "V module", key = "v_pv", fmt = "%.2f", unit = "V" },
  { name = "V diode", key = "v_db", fmt = "%.3f", unit = "V" },
  { name = "I charge", key = "i", unit = "A" },
  { name = "I exact", key = "i_exact", unit = "A" },
  { name = "P battery", key = "p_bat", unit = "W" },
  { name = "P diode", key = "p_db", unit = "W" },
  { name = "battery", key = "state" },
}, { units = "cells" }))
say("At night the blocking diode holds the battery's reverse current to its leakage;")
say("in deep shade (10 W/m^2 here) the shunt takes the whole photocurrent before the")
say("module voltage reaches the battery, and nothing charges.")

return { rows = rows, dark = dark, block = block, dark_law = dark_law, block_law = block_law,
         params = { rsh = RSH, rw = RW, vbat = VBAT, dark = DARK, block = BLOCK } }
