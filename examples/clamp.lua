-- A clamp on a 5 V sensor input under an overvoltage: a 24 V supply wire
-- shorted onto the sensor line.  The clamp (a low-voltage varistor-like
-- part, i = k*v^15, 1 mA at 6.8 V, rated 1 W continuous; invented values)
-- sits behind a 100 ohm series resistor, in parallel with the ADC's 10 kohm
-- input.  Shown: the assumed-state trace, the clamp's current and power
-- against its rating, and a sweep of fault voltages with the exact law.
--   lua5.4 examples/clamp.lua
local sw, say = dofile("examples/preamble.lua") { ... }

local N, V1MA = 15, 6.8                  -- exponent; voltage at 1 mA
local K = 1e-3 / V1MA ^ N                -- i = K * v^N
local PMAX, RS, RIN, FAULT = 1.0, 100, 10e3, 24

local law = sw.curve.power { k = K, n = N }
-- Operating range 0 .. 11 V (beyond any fault below ~140 V through 100 ohm).
-- A relative tolerance (3 %, measured against at least 0.1 mA) keeps the
-- leakage below the knee right: an absolute 5 mA band would let the model
-- run negative there and spoil the sensor reading at 5 V.
local model = sw.fit(law, { lo = 0, hi = 11, tol = 0.03, error = "rel", rel_floor = 1e-4 })
local info = model:fit_info()
say(("clamp model: %d segments on 0 .. 11 V, max relative error %.1f %% against i = k*v^%d"):format(
  model:nseg(), info.max_rel * 100, N))

local net = sw.network()
net:vsource("VF", "wire", "gnd", FAULT)
net:resistor("RS", "wire", "in", RS)
net:element("DZ", "in", "gnd", model, { x = "v", pmax = PMAX, exact = law })
net:resistor("RIN", "in", "gnd", RIN)

-- The assumed-state method, started with the clamp off (its first segment).
local op = net:solve { method = "assumed", trace = true, start = { DZ = 1 } }
say(("\n%s fault, assumed-state trace from the clamp's off segment:"):format(sw.si(FAULT, "V")))
say(tostring(op.trace))
say("")
say(sw.report.op_table(op))

local values = { 5, 9, 12, 18, 24, 36 }
local rows = net:sweep("VF", values)
local sweep = {}
for k, r in ipairs(rows) do
  net:set("VF", values[k])
  local ex = net:solve { exact = true }
  sweep[k] = { vf = values[k], v_in = r.v["in"], i_dz = r.i.DZ, i_exact = ex.i.DZ, p_dz = r.p.DZ,
               share = r.p.DZ / PMAX * 100, rated = math.abs(r.p.DZ) <= PMAX and "within" or "OVER",
               warnings = #r.warnings, over_rating = 0 }
  for w = 1, #r.warnings do
    if r.warning_info[w].kind == "pmax" then sweep[k].over_rating = sweep[k].over_rating + 1 end
  end
end
net:set("VF", FAULT)
say(("fault voltage sweep (clamp rated %s):"):format(sw.si(PMAX, "W")))
say(sw.report.table(sweep, {
  { name = "fault", key = "vf", unit = "V" },
  { name = "V at input", key = "v_in", fmt = "%.3f", unit = "V" },
  { name = "I clamp", key = "i_dz", unit = "A" },
  { name = "I exact", key = "i_exact", unit = "A" },
  { name = "P clamp", key = "p_dz", unit = "W" },
  { name = "of rating", key = "share", fmt = "%.0f", unit = "%" },
  { name = "rating", key = "rated" },
}, { units = "cells" }))
say("CAUTION: a PWL model is an approximation of the part.  Check the real clamp's")
say("datasheet ratings (continuous and surge power, clamping voltage at the fault current,")
say("temperature derating); a clamp driven past its rating may fail short or open.  For mains")
say("or high-energy circuits follow local electrical codes and licensed practice.")

return { model = model, law = law, k = K, n = N, rs = RS, rin = RIN, pmax = PMAX, fault = FAULT,
         op = op, sweep = sweep }
