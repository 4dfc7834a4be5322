-- Three white LEDs in series with a ballast resistor on a 12 V bus that sags
-- and rises by 10 %.  Fit the LED's v(i) from a measured sweep over its
-- working current range, choose the ballast for 20 mA at the nominal bus,
-- and tabulate current and power across the bus range, PWL against the
-- exact law the (invented) data came from.
--   lua5.4 examples/led_string.lua            (from the repository root)
local sw, say = dofile("examples/preamble.lua") { ... }

local BUS, NLED, TARGET = 12.0, 3, 0.020         -- volts, LEDs in the string, amps
local E24 = { 1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
              3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1 }

-- The smallest E24 value at or above r: the current stays at or below target.
local function e24_at_or_above(r)
  local decade = 10 ^ math.floor(math.log(r, 10))
  for _, m in ipairs(E24) do
    if m * decade >= r * (1 - 1e-9) then return m * decade end
  end
  return 10 * decade
end

-- 1. The measured sweep (current in mA in the file) and its PWL model
--    over the working range 5..35 mA; least squares suits noisy data.
local led = sw.curve.read("examples/data/led_white.csv",
  { x = "I_mA", y = "V_V", scale = { x = 1e-3 } })
local model = sw.fit(led, { lo = 0.005, hi = 0.035, segments = 4, criterion = "lsq" })
-- The law the invented data was generated from (see the file's first line).
local law = sw.curve.diode { is = 2e-18, n = 3.0, vt = 0.02585, rs = 6, x = "i" }
local vs_law = model:compare(law, { lo = 0.005, hi = 0.035 })
say("LED model, v(i) fitted to examples/data/led_white.csv over 5 mA .. 35 mA")
say(sw.report.fit_table(model, { x = "A", y = "V" }))
say(("model against the exact law: max error %s at %s, rms %s\n"):format(
  sw.si(vs_law.max_abs, "V"), sw.si(vs_law.x_abs, "A"), sw.si(vs_law.rms, "V")))

-- 2. Ballast for TARGET at the nominal bus: R = (BUS - NLED*v(TARGET)) / TARGET.
local r_calc = (BUS - NLED * model(TARGET)) / TARGET
local r = e24_at_or_above(r_calc)
say(("ballast: %s calculated, %s chosen (E24, at or above)\n"):format(sw.si(r_calc, "Ω"),
  sw.si(r, "Ω")))

-- 3. The string: VB -> RB -> LED1 -> LED2 -> LED3 -> ground.  Each LED's model
--    gives v(i), so x = "i"; the exact law rides along for the comparison.
local net = sw.network()
net:vsource("VB", "bus", "gnd", BUS)
net:resistor("RB", "bus", "tap1", r)
local nodes = { "tap1", "tap2", "tap3", "gnd" }
for k = 1, NLED do
  net:element("LED" .. k, nodes[k], nodes[k + 1], model, { x = "i", exact = law })
end

local rows = {}
for k = 0, 6 do
  local vb = BUS * (0.9 + 0.2 * k / 6)
  net:set("VB", vb)
  local op = net:solve()
  local ex = net:solve { exact = true }
  local i = op.i.LED1
  rows[#rows + 1] = {
    vb = vb, i = i, i_exact = ex.i.LED1,
    dev = math.abs(i - ex.i.LED1) < 5e-5 * ex.i.LED1 and 0 or (i - ex.i.LED1) / ex.i.LED1 * 100,
    v_led = op.vd.LED1, p_led = op.p.LED1, p_r = op.p.RB, eff = NLED * op.p.LED1 / (vb * i) * 100,
  }
end
net:set("VB", BUS)

say("current and power across the bus range (PWL model; exact law for comparison)")
say(sw.report.table(rows, {
  { name = "bus", key = "vb", unit = "V" },
  { name = "I", key = "i", unit = "A" },
  { name = "I exact", key = "i_exact", unit = "A" },
  { name = "PWL-exact", key = "dev", fmt = "%+.2f", unit = "%" },
  { name = "V per LED", key = "v_led", fmt = "%.3f", unit = "V" },
  { name = "P per LED", key = "p_led", unit = "W" },
  { name = "P ballast", key = "p_r", unit = "W" },
  { name = "LED share", key = "eff", fmt = "%.1f", unit = "%" },
}))
say(("the ±10 %% bus swing moves the LED current from %s to %s (%.0f %% of the nominal "
  .. "current)"):format(
  sw.si(rows[1].i, "A"), sw.si(rows[#rows].i, "A"), (rows[#rows].i - rows[1].i) / rows[4].i * 100))

-- 4. Tolerances: the ballast within ±5 % (uniform) and the bus with a 3 %
--    standard deviation (normal), 20000 seeded runs written into arrays.
local RUNS = 20000
local mc = net:montecarlo({ RB = 0.05, VB = { sd = 0.03 } },
  { runs = RUNS, seed = 24, out = { "i.LED1", "p.LED1" } })
local st, above = mc.stats["i.LED1"], 0
for k = 1, RUNS do
  if mc["i.LED1"][k] > 1.25 * TARGET then above = above + 1 end
end
say(("tolerance study, %d runs: LED current %s ± %s (sd), %s .. %s; %.2f %% of the runs "
  .. "above %s"):format(
  RUNS, sw.si(st.mean, "A"), sw.si(st.sd, "A"), sw.si(st.min, "A"), sw.si(st.max, "A"),
  above / RUNS * 100, sw.si(1.25 * TARGET, "A")))
say(("largest LED dissipation in those runs: %s (check it against the LED's rating)"):format(
  sw.si(mc.stats["p.LED1"].max, "W")))

return { model = model, law = law, r = r, r_calc = r_calc, nled = NLED, target = TARGET,
         rows = rows, vs_law = vs_law, mc = mc, above = above }
