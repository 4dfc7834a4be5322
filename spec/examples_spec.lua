-- The examples and the demo study: each is run (output suppressed) and its
-- key numbers are checked against something worked out here, outside the
-- example: Kirchhoff's and Ohm's laws by hand algebra, the exact laws the
-- invented data came from (evaluated and solved here with our own
-- bisection), hand counts of load-line crossings, the data files re-read
-- line by line, and the saved model file compared with what was saved.
local sw = require "segwise"

local dir = os.tmpname()
os.remove(dir)
assert(os.execute("mkdir -p '" .. dir .. "'"))

-- Runs examples/<name>.lua quietly, its files under dir.
local function run(name)
  local chunk = assert(loadfile("examples/" .. name .. ".lua"))
  return chunk("--quiet", dir .. "/" .. name)
end

-- Runs an example as a user would, from the shell; returns its output.
local function run_shell(name, ...)
  local args = {}
  for i, a in ipairs { ... } do args[i] = ("'%s'"):format(a) end
  local cmd = ("LUA_PATH='%s' LUA_CPATH='%s' lua5.4 examples/%s.lua %s 2>&1"):format(
    package.path, package.cpath, name, table.concat(args, " "))
  local p = assert(io.popen(cmd))
  local out = p:read("a")
  local ok = p:close()
  return out, ok
end

-- Bisection on f over [a, b] (f(a), f(b) of opposite signs) to the last bit.
local function bisect(f, a, b)
  assert(f(a) * f(b) <= 0, "bisect: no sign change")
  return require("helpers.net").bisect(f, a, b)
end

-- A data file read line by line: '#' comments, one header, then x,y rows.
local function read_csv(path)
  local xs, ys, header, first = {}, {}, nil, nil
  for line in io.lines(path) do
    first = first or line
    if not line:match("^#") and line:match("%S") then
      if not header then header = line
      else
        local x, y = line:match("^([^,]+),([^,]+)$")
        xs[#xs + 1], ys[#ys + 1] = tonumber(x), tonumber(y)
      end
    end
  end
  return xs, ys, header, first
end

-- Straight-line interpolation of sorted points (our own, for the measured curve).
local function interp(xs, ys, x)
  for k = 1, #xs - 1 do
    if x >= xs[k] and x <= xs[k + 1] then
      return ys[k] + (ys[k + 1] - ys[k]) * (x - xs[k]) / (xs[k + 1] - xs[k])
    end
  end
  error("interp: x outside the data")
end

-- Largest |model - measured| of a PWL model against straight-line-joined
-- points: both are piecewise linear, so the largest gap lies at a data
-- point or at a model knot (a maximum of a piecewise-linear function sits
-- on a breakpoint).
local function max_gap(m, xs, ys)
  local worst = 0
  for k = 1, #xs do worst = math.max(worst, math.abs(m(xs[k]) - ys[k])) end
  local kx = m:knots()
  for k = 1, #kx do
    if kx[k] >= xs[1] and kx[k] <= xs[#xs] then
      worst = math.max(worst, math.abs(m(kx[k]) - interp(xs, ys, kx[k])))
    end
  end
  return worst
end

local function near_rel(expected, got, rel, what)
  assert.is_true(math.abs(expected - got) <= rel * math.abs(expected) + 1e-300,
    ("%s: expected %.17g, got %.17g (rel tol %g)"):format(what or "value", expected, got, rel))
end

describe("segwise examples", function()
  describe("data files", function()
    it("each starts with a comment saying the data is invented, and stays small", function()
      for _, f in ipairs { "led_white.csv", "schottky_iv.csv", "rectifier_iv.csv" } do
        local xs, _, header, first = read_csv("examples/data/" .. f)
        assert.truthy(first:match("^# INVENTED demo data"), f)
        assert.truthy(first:find("LCG seed %d+"), f)   -- the seed is named
        assert.truthy(header:match("^[%a_]+,[%a_]+$"), f)
        assert.is_true(#xs > 10 and #xs < 200, f)
      end
    end)

    it("the LED data lies within its stated noise of the stated law", function()
      -- first line: is=2e-18 A, n=3.0, vt=25.85 mV, rs=6 ohm, +-2 mV.
      -- Shockley with series resistance solved for v (closed form):
      -- v = n vt ln(i/is + 1) + i rs.
      local xs, ys = read_csv("examples/data/led_white.csv")
      for k = 1, #xs do
        local i = xs[k] * 1e-3
        local v = 3.0 * 0.02585 * math.log(i / 2e-18 + 1) + i * 6
        assert.is_true(math.abs(ys[k] - v) <= 0.002 + 1e-6, "row " .. k)
      end
    end)
  end)

  describe("led_string", function()
    local r = run("led_string")
    local IS, N, VT, RS = 2e-18, 3.0, 0.02585, 6
    -- closed form, as above
    local function v_law(i) return N * VT * math.log(i / IS + 1) + i * RS end

    it("chooses the E24 ballast at or above (VB - 3 v(20 mA)) / 20 mA", function()
      -- Ohm's law on the resistor at the nominal point (hand algebra)
      near_rel((12 - 3 * r.model(0.02)) / 0.02, r.r_calc, 1e-12, "r_calc")
      assert.is_true(r.r >= r.r_calc)
      assert.is_true(r.r / r.r_calc < 1.1)           -- E24 steps are under 10 % (common practice)
      -- the same sum with the exact law: the model is within 1 %
      near_rel((12 - 3 * v_law(0.02)) / 0.02, r.r_calc, 0.01, "r_calc vs law")
      -- E24 value: 160 ohm (table of E24, common practice)
      assert.are.equal(160, r.r)
    end)

    it("each row obeys KVL and the model: VB = R i + 3 v(i)", function()
      assert.are.equal(7, #r.rows)
      for k, row in ipairs(r.rows) do
        near_rel(12 * (0.9 + 0.2 * (k - 1) / 6), row.vb, 1e-12, "bus")
        near_rel(row.vb, r.r * row.i + 3 * r.model(row.i), 1e-10, "KVL")
        near_rel(r.model(row.i), row.v_led, 1e-10, "v on the model")
        near_rel(row.v_led * row.i, row.p_led, 1e-10, "P = v i")
        near_rel(row.i * row.i * r.r, row.p_r, 1e-10, "P = i^2 R (Joule)")
      end
    end)

    it("every tolerance run obeys KVL with its own drawn values", function()
      local mc = r.mc
      assert.are.equal(20000, #mc["i.LED1"])
      for k = 1, 20000, 997 do
        local vb, rb, i = mc.values.VB[k], mc.values.RB[k], mc["i.LED1"][k]
        near_rel(vb, rb * i + 3 * r.model(i), 1e-10, "KVL in run " .. k)
        near_rel(r.model(i) * i, mc["p.LED1"][k], 1e-10, "P = v i in run " .. k)
        assert.is_true(math.abs(rb / r.r - 1) <= 0.05, "ballast within 5 %")
      end
      local above = 0
      for k = 1, 20000 do if mc["i.LED1"][k] > 1.25 * r.target then above = above + 1 end end
      assert.are.equal(above, r.above)
      local st = mc.stats["i.LED1"]
      assert.is_true(st.min < st.mean and st.mean < st.max)
    end)

    it("the exact column is the root of VB = R i + 3 v_law(i) (bisection here)", function()
      for _, row in ipairs(r.rows) do
        local i = bisect(function(x) return row.vb - r.r * x - 3 * v_law(x) end, 1e-6, 0.1)
        near_rel(i, row.i_exact, 1e-7, "exact current")
        near_rel(i, row.i, 0.01, "PWL within 1 %")
      end
    end)

    it("the LED current rises with the bus and stays inside the fitted range", function()
      for k = 2, #r.rows do assert.is_true(r.rows[k].i > r.rows[k - 1].i) end
      for _, row in ipairs(r.rows) do assert.is_true(row.i >= 0.005 and row.i <= 0.035) end
      -- nominal bus, E24 ballast above the calculated value: a little under 20 mA
      assert.is_true(r.rows[4].i < r.target and r.rows[4].i > 0.9 * r.target)
    end)
  end)

  describe("breakpoints", function()
    local r = run("breakpoints")
    local xs, ys = read_csv("examples/data/schottky_iv.csv")
    for k = 1, #ys do ys[k] = ys[k] * 1e-3 end

    it("fits five schemes, the tolerance fit within its tolerance (recomputed from the "
      .. "file)", function()
      assert.are.equal(5, #r.fits)
      for _, f in ipairs(r.fits) do
        local gap = max_gap(f.model, xs, ys)
        -- the library's own comparison agrees with the recomputed gap
        assert.is.near(gap, f.model:compare(r.curve).max_abs, 1e-12 + 1e-9 * gap)
      end
      assert.is_true(max_gap(r.within_tol, xs, ys) <= r.tol * (1 + 1e-9))
    end)

    it("optimal knots beat every other placement of the same count", function()
      -- best max error over all knot placements (definition of the optimum);
      -- 0.1 % slack for the grid the knots are chosen on
      local best = max_gap(r.optimal, xs, ys)
      for _, s in ipairs { "uniform", "geometric", "curvature" } do
        assert.are.equal(r.segments, r[s]:nseg())
        assert.is_true(best <= max_gap(r[s], xs, ys) * 1.001, s)
      end
    end)

    it("the tolerance fit needs more segments than the 6-segment optimum misses by", function()
      -- the 6-segment optimum misses 2 mA, so the tolerance fit needs more than 6
      assert.is_true(max_gap(r.optimal, xs, ys) > r.tol)
      assert.is_true(r.within_tol:nseg() > r.segments)
    end)

    it("writes two SVG plots naming every fit", function()
      for _, p in ipairs(r.plots) do
        local f = assert(io.open(p))
        local s = f:read("a")
        f:close()
        assert.truthy(s:find("^<%?xml") or s:find("^<svg"))
        assert.truthy(s:find("</svg>%s*$"))
        for _, name in ipairs { "uniform knots", "geometric knots", "curvature knots",
                                "optimal knots" } do
          assert.truthy(s:find(name, 1, true), name .. " in " .. p)
        end
      end
    end)
  end)

  describe("clamp", function()
    local r = run("clamp")
    local function law(v) return r.k * v ^ r.n end   -- i = k v^n, 1 mA at 6.8 V
    it("the law is 1 mA at 6.8 V", function() assert.is.near(1e-3, law(6.8), 1e-15) end)

    it("every sweep row obeys KCL at the input: (VF - v)/RS = i_clamp + v/RIN", function()
      for _, row in ipairs(r.sweep) do
        assert.is.near((row.vf - row.v_in) / r.rs, row.i_dz + row.v_in / r.rin, 1e-12)
      end
    end)

    it("the exact column is the root of the node equation with the law (bisection here)", function()
      for _, row in ipairs(r.sweep) do
        local v = bisect(function(x) return (row.vf - x) / r.rs - law(x) - x / r.rin end, 0, row.vf)
        near_rel(law(v), row.i_exact, 1e-6, "exact clamp current")
        -- the load line falls, so the PWL current error is at most the
        -- model's error there: 3 % of at least 0.1 mA (the fit's tolerance)
        assert.is_true(math.abs(row.i_dz - law(v)) <= 0.03 * math.max(law(v), 1e-4) * 1.001 + 1e-9,
          ("fault %g V: %g vs %g"):format(row.vf, row.i_dz, law(v)))
      end
    end)

    it("flags exactly the rows whose clamp power exceeds the rating", function()
      local over = 0
      for _, row in ipairs(r.sweep) do
        local p = row.v_in * row.i_dz                  -- P = v i
        assert.is.near(p, row.p_dz, 1e-12)
        local want = math.abs(p) > r.pmax
        assert.are.equal(want and "OVER" or "within", row.rated)
        assert.are.equal(want and 1 or 0, row.over_rating)
        if want then over = over + 1 end
      end
      -- 24 V and 36 V (hand estimate: ~1.4 W, ~2.6 W)
      assert.are.equal(2, over)
    end)

    it("the 24 V trace ends consistent, on the point the sweep found", function()
      assert.is_true(#r.op.trace >= 2)
      assert.truthy(tostring(r.op.trace):find("the state is consistent", 1, true))
      assert.truthy(r.op.warnings[1]:find("above its pmax rating", 1, true))
      for _, row in ipairs(r.sweep) do
        if row.vf == 24 then assert.is.near(row.v_in, r.op.v["in"], 1e-9) end
      end
    end)

    it("prints the safety caution when run from the shell", function()
      local out, ok = run_shell("clamp")
      assert.is_true(ok, out)
      assert.truthy(out:find("CAUTION", 1, true))
      assert.truthy(out:find("local electrical codes and licensed practice", 1, true))
    end)
  end)

  describe("solar", function()
    local r = run("solar")
    local P = r.params
    local D, B = P.dark, P.block
    -- v(i) of the blocking diode in closed form; i(v) of the dark diode
    local function v_block(i) return B.n * B.vt * math.log(i / B.is + 1) + i * B.rs end
    local function i_dark(v) return D.is * (math.exp(v / (D.n * D.vt)) - 1) end

    it("each row obeys KVL around the battery loop: Vpv = Vdiode + Vbat + I Rw", function()
      for _, row in ipairs(r.rows) do
        assert.is.near(row.v_pv, row.v_db + P.vbat + row.i * P.rw, 1e-9)
        assert.is.near(row.i * P.vbat, row.p_bat, 1e-9)
      end
    end)

    it("charging rows match the one-diode equations solved here (bisection on I)", function()
      local charging = 0
      for _, row in ipairs(r.rows) do
        if row.state == "charging" then
          charging = charging + 1
          -- photocurrent = dark diode + shunt + battery current, Vpv from the loop
          local function f(i)
            local vp = v_block(i) + P.vbat + i * P.rw
            return row.iph - i_dark(vp) - vp / P.rsh - i
          end
          local i = bisect(f, 1e-9, row.iph)
          near_rel(i, row.i_exact, 1e-6, "exact charge current")
          -- model tolerances: 5 mA (dark) + 10 mA (blocking) at most
          assert.is_true(math.abs(row.i - i) <= 0.015, ("G %d: %g vs %g"):format(row.g, row.i, i))
        end
      end
      assert.are.equal(8, charging)
    end)

    it("blocked rows: the battery sees only leakage, and the module stays below the "
      .. "battery", function()
      local blocked = 0
      for _, row in ipairs(r.rows) do
        if row.state == "blocked" then
          blocked = blocked + 1
          assert.is_true(row.i <= 0 and row.i > -1e-5)  -- at most the reverse leakage (is = 2 uA)
          assert.is_true(row.v_pv < P.vbat)
          -- shunt alone would need Vbat/Rsh = 84 mA: more than the photocurrent (hand algebra)
          assert.is_true(row.iph < P.vbat / P.rsh)
        end
      end
      assert.are.equal(2, blocked)                     -- 0 and 10 W/m^2
    end)
  end)

  describe("bistable", function()
    local r = run("bistable")

    -- Load line i = (E - v)/R against each segment i = s v + c: v = (E/R - c)/(s + 1/R);
    -- a crossing counts when it lies in the segment (hand algebra).
    local function crossings(e)
      local found = {}
      local n = r.model:nseg()
      for k = 1, n do
        local sg = r.model:seg(k)
        local v = (e / r.r - sg.intercept) / (sg.slope + 1 / r.r)
        local inside = v >= sg.lo and (v < sg.hi or (k == n and v <= sg.hi))
        if inside then found[#found + 1] = { v = v, slope = sg.slope } end
      end
      return found
    end

    it("finds every crossing counted by hand, each with the right stability", function()
      local hand = crossings(r.e)
      assert.are.equal(3, #hand)
      assert.are.equal(#hand, #r.points)
      for k, p in ipairs(r.points) do
        assert.is.near(hand[k].v, p.v, 1e-12)
        -- with a small capacitance across the device: stable iff di/dv + 1/R > 0
        -- (linearised C dv/dt = (E - v)/R - i(v); common practice)
        local want = hand[k].slope + 1 / r.r > 0 and "stable" or "unstable"
        assert.are.equal(want, p.stability)
        assert.is.near(r.model(p.v), p.i, 1e-12)
      end
    end)

    it("the crossings are within 15 mV of the exact law's (sign changes found here)", function()
      local f = function(v) return (r.e - v) / r.r - r.law(v) end
      local roots, n = {}, 6000
      for k = 0, n - 1 do
        local a, b = 0.6 * k / n, 0.6 * (k + 1) / n
        if f(a) * f(b) < 0 then roots[#roots + 1] = bisect(f, a, b) end
      end
      assert.are.equal(3, #roots)
      for k = 1, 3 do assert.is.near(roots[k], r.points[k].v, 0.015) end
    end)

    it("shows two states exactly where the hand count finds three crossings", function()
      local two = 0
      for _, row in ipairs(r.hysteresis) do
        local count = #crossings(row.e)
        assert.are.equal(count >= 3, row.differ == "two states", ("E = %g V"):format(row.e))
        if count >= 3 then
          two = two + 1
          -- going up stays on the low branch, going down on the high one
          assert.is_true(row.v_up < row.v_down)
        end
        -- each point sits on the load line (KVL): E = R i + v
        assert.is.near(row.e, r.r * row.i_up + row.v_up, 1e-12)
        assert.is.near(row.e, r.r * row.i_down + row.v_down, 1e-12)
      end
      assert.is_true(two >= 3)
    end)
  end)

  describe("rig_glue", function()
    local r = run("rig_glue")

    it("reads the rig's text readings (parsed here independently)", function()
      local src = assert(io.open("examples/rig_glue.lua")):read("a")
      local k = 0
      for v, ma in src:gmatch('{ v_set = ([%d.]+), reading = "([%d.]+) mA" }') do
        k = k + 1
        assert.are.equal(tonumber(v), r.vs[k])
        assert.is.near(tonumber(ma) * 1e-3, r.is[k], 1e-15)
      end
      assert.are.equal(28, k)
    end)

    it("fits every reading within the tolerance", function()
      for k = 1, #r.vs do
        assert.is_true(math.abs(r.model(r.vs[k]) - r.is[k]) <= r.tol * (1 + 1e-9), "reading " .. k)
      end
    end)

    it("reloads exactly the model it saved", function()
      local f = assert(io.open(r.path))
      assert.truthy(f:read("l"):find("^# segwise"))
      f:close()
      assert.are.equal("V", r.x_unit)
      assert.are.equal("A", r.y_unit)
      assert.are.equal(r.model:nseg(), r.loaded:nseg())
      local x1, y1 = r.model:knots()
      local x2, y2 = r.loaded:knots()
      for k = 1, #x1 do
        assert.are.equal(x1[k], x2[k])                 -- bit for bit
        assert.are.equal(y1[k], y2[k])
      end
      for k = 0, 100 do
        local v = 14 * k / 100
        assert.are.equal(r.model(v), r.loaded(v))
      end
    end)

    it("solves the lamp circuit: KVL by hand and the lamp's law within 1 %", function()
      local op = r.op_loaded
      local i, v = op.i.LP, op.vd.LP
      assert.is.near(r.supply, r.r * i + v, 1e-10)     -- 24 V = R i + v
      assert.is.near(r.loaded(v), i, 1e-12)            -- on the model
      assert.are.equal(op.i.LP, r.op.i.LP)
      -- the law the readings came from: i = 20 mA (v/1 V)^0.6
      local vx = bisect(function(x) return r.supply - r.r * 0.02 * x ^ 0.6 - x end, 0, r.supply)
      near_rel(0.02 * vx ^ 0.6, i, 0.01, "lamp current vs law")
    end)
  end)

  describe("demo_study", function()
    local t0 = os.time()
    local out, ok = run_shell("demo_study", dir .. "/demo")
    local elapsed = os.time() - t0
    local r = run("demo_study")

    it("runs from the shell in a few seconds and names its folder and the caution", function()
      assert.is_true(ok, out)
      assert.is_true(elapsed <= 10)
      assert.truthy(out:find("written to " .. dir .. "/demo/", 1, true))
      assert.truthy(out:find("local electrical codes and licensed practice", 1, true))
      assert.truthy(out:find("a model is an approximation", 1, true)
        or out:find("A PWL model is an approximation", 1, true))
      for _, t in ipairs { "max abs", "node voltages", "supply (V)" } do
        assert.truthy(out:find(t, 1, true), t)
      end
    end)

    it("writes five SVG files, each complete", function()
      assert.are.equal(5, #r.plots)
      for _, p in ipairs(r.plots) do
        local f = assert(io.open(p))
        local s = f:read("a")
        f:close()
        assert.truthy(s:find("</svg>%s*$"), p)
        assert.truthy(s:find("<text", 1, true), p)
      end
    end)

    it("the tolerance fits meet their tolerances on the file's points (recomputed)", function()
      local xs, ys = read_csv("examples/data/rectifier_iv.csv")
      for k = 1, #ys do ys[k] = ys[k] * 1e-3 end
      local abs_fit, rel_fit = r.fits[5].model, r.fits[6].model
      assert.is_true(max_gap(abs_fit, xs, ys) <= r.tol * (1 + 1e-9))
      for k = 1, #xs do
        -- relative to at least 1 mA, within 5 %
        assert.is_true(math.abs(rel_fit(xs[k]) - ys[k])
          <= 0.05 * math.max(math.abs(ys[k]), 1e-3) * (1 + 1e-9))
      end
      assert.are.equal(rel_fit, r.chosen)
    end)

    it("every sweep row obeys KVL and Ohm's law, and the measured column lies on the "
      .. "data", function()
      local xs, ys = read_csv("examples/data/rectifier_iv.csv")
      for k = 1, #ys do ys[k] = ys[k] * 1e-3 end
      assert.are.equal(18, #r.rows)
      for _, row in ipairs(r.rows) do
        assert.is.near(row.vs, row.v_d + row.v_load, 1e-12)     -- KVL
        near_rel(row.v_load / r.rl, row.i, 1e-10, "Ohm")         -- i = v / R
        near_rel(row.v_d * row.i, row.p_d, 1e-10, "P = v i")
        near_rel(r.chosen(row.v_d), row.i, 1e-10, "on the model")
        -- the Newton column: the load line meets the straight-line-joined data
        local v = bisect(function(x) return (row.vs - x) / r.rl - interp(xs, ys, x) end, 0,
          math.min(row.vs, 1))
        assert.is.near(interp(xs, ys, v), row.i_data, 1e-9 + 1e-7 * row.i_data)
        -- model within its 5 % (1 mA floor) of the data: so is the current
        assert.is_true(math.abs(row.i - row.i_data) <= 0.05 * math.max(row.i_data, 1e-3))
      end
    end)
  end)
end)
