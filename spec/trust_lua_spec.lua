-- Issue 11 (trust), the Lua side: every stated number is right and bounded,
-- or refused with a reason.  Corners over level lists, exact solves without
-- exact curves, option checking, Monte Carlo statistics and tolerances,
-- labels and trace events, grouped cautions in printed reports.
local sw = require "segwise"
local helpers = require "helpers.files"
local raises = helpers.raises

-- A diode-like i(v) model: off below 0.6 V, 20 mA at 0.8 V (invented).
local function diode_model()
  return sw.pwl { x = { 0, 0.6, 0.8 }, y = { 0, 1e-4, 0.02 } }
end

local function supply_circuit(volts, ohms)
  local net = sw.network()
  net:vsource("VS", "in", "0", volts or 12)
  net:resistor("RA", "in", "a", ohms or 100)
  net:element("DIODE", "a", "0", diode_model())
  return net
end

-- Mean and sample standard deviation by two passes (the textbook definition,
-- no cancellation: the squared deviations are summed after the mean).
local function two_pass(xs)
  local s = 0
  for _, x in ipairs(xs) do s = s + x end
  local mean = s / #xs
  local q = 0
  for _, x in ipairs(xs) do q = q + (x - mean) ^ 2 end
  return mean, math.sqrt(q / (#xs - 1))
end

describe("issue 11, Lua side", function()
  describe("corners over lists of levels", function()
    it("solves every combination of a 3-level and a 2-level list (6 corners)", function()
      local net = supply_circuit()
      local box = net:corners { VS = { 10.8, 12, 13.2 }, RA = { 90, 110 } }
      assert.are.equal(6, #box.corners)
      local seen = {}
      for _, c in ipairs(box.corners) do
        seen[("%g/%g"):format(c.values.VS, c.values.RA)] = true
      end
      for _, vs in ipairs { 10.8, 12, 13.2 } do
        for _, ra in ipairs { 90, 110 } do
          assert.is_true(seen[("%g/%g"):format(vs, ra)], ("corner VS = %g, RA = %g"):format(vs, ra))
        end
      end
    end)

    it("matches a direct solve at each corner, and min/max cover the middle level", function()
      local net = supply_circuit()
      local box = net:corners { VS = { 10.8, 12, 13.2 }, RA = { 90, 110 } }
      local lo, hi = math.huge, -math.huge
      for _, c in ipairs(box.corners) do
        local ref = supply_circuit(c.values.VS, c.values.RA):solve()
        -- the same linear solve twice: equal to rounding (1e-15 A)
        assert.is.near(ref.i.DIODE, c.op.i.DIODE, 1e-15)
        lo, hi = math.min(lo, ref.i.DIODE), math.max(hi, ref.i.DIODE)
      end
      assert.is.near(lo, box.min.i.DIODE, 1e-15)
      assert.is.near(hi, box.max.i.DIODE, 1e-15)
      -- the nominal values come back afterwards
      assert.is.near(12, net:solve().vd.VS, 1e-15)
    end)

    it("keeps {lo, hi} the two-level case", function()
      local box = supply_circuit():corners { VS = { 10, 14 }, RA = { 90, 110 } }
      assert.are.equal(4, #box.corners)
    end)

    it("caps the product of the level counts, not 2^n", function()
      local net = supply_circuit()
      local many = {}
      for k = 1, 1100 do many[k] = 10 + k * 1e-3 end
      local ras = {}
      for k = 1, 1000 do ras[k] = 90 + k * 1e-2 end
      -- sorted names: RA's 1000 levels, then VS's 1100
      raises("1000 x 1100 = 1100000 corners", net.corners, net, { VS = many, RA = ras })
    end)

    it("refuses levels that are not numbers, naming the entry", function()
      local net = supply_circuit()
      raises("RA[2] must be a number", net.corners, net, { RA = { 90, "x" } })
      raises("RA must be a list of values", net.corners, net, { RA = {} })
    end)
  end)

  describe("exact solves need exact curves", function()
    local law = sw.curve.diode { is = 1e-12, n = 1.8 }

    it("refuses exact = true when no device has an exact curve, naming the devices", function()
      local net = supply_circuit(5, 1000)
      net:element("DIODE2", "a", "0", diode_model())
      local err = raises("exact = true", net.solve, net, { exact = true })
      assert.is_truthy(err:find("DIODE, DIODE2", 1, true), err)
    end)

    it("warns which devices kept their PWL model when only some have a curve", function()
      local net = sw.network():vsource("VS", "in", "0", 5):resistor("RA", "in", "a", 1000)
      net:element("DIODE", "a", "b", sw.fit(law, { lo = 0.5, hi = 1.2, segments = 8 }),
        { exact = law })
      net:element("DIODE2", "b", "0", sw.fit(law, { lo = 0.5, hi = 1.2, segments = 8 }))
      local op = net:solve { exact = true }
      local found
      for _, w in ipairs(op.warnings) do
        if w:find("DIODE2", 1, true) and w:find("no exact curve", 1, true) then found = w end
      end
      assert.is_truthy(found, table.concat(op.warnings, "\n"))
      assert.is_falsy(found:find("DIODE,", 1, true))
    end)
  end)

  describe("options tables go through one checker", function()
    local rows = { { v = 0.7, i = 0.0021 } }

    it("rejects a misspelt report.table option, listing the known ones", function()
      local err = raises("segwise.report.table: unknown option 'formt'", sw.report.table, rows,
        { "v" }, { formt = "csv" })
      assert.is_truthy(err:find("format", 1, true) and err:find("digits", 1, true), err)
    end)

    it("rejects a column naming a key no row has, listing the row keys", function()
      local err = raises("segwise.report.table: column 2 ('I')", sw.report.table, rows,
        { "v", "I" })
      assert.is_truthy(err:find("i, v", 1, true), err)
      raises("column 1 ('i.DIODE')", sw.report.table, { { i = { RA = 1 } } }, { "i.DIODE" })
    end)

    it("rejects a misspelt column field, naming the column", function()
      local err = raises("segwise.report.table: column 2: unknown field 'units'",
        sw.report.table, rows, { "v", { name = "i", units = "A" } })
      assert.is_truthy(err:find("si, unit)", 1, true), err)
    end)

    it("still prints an empty table and columns computed by fn", function()
      assert.is_truthy(sw.report.table({}, { "v" }):find("v"))
      local t = sw.report.table(rows, { { name = "twice", fn = function(r) return 2 * r.v end } })
      assert.is_truthy(t:find("1.4", 1, true))
    end)

    it("checks the ready-made reports and json too", function()
      local m = sw.pwl { x = { 0, 1, 2 }, y = { 0, 1, 4 } }
      raises("segwise.report.fit_table: unknown option 'formt'", sw.report.fit_table, m,
        { formt = "csv" })
      local op = supply_circuit():solve()
      raises("segwise.report.op_table: unknown option 'grond'", sw.report.op_table, op,
        { grond = true })
      raises("segwise.report.compare_fits: unknown option 'sortby'", sw.report.compare_fits,
        { { name = "a", model = m } }, sw.curve.samples({ 0, 1, 2 }, { 0, 1, 4 }),
        { sortby = "rms" })
      raises("segwise.report.json: unknown option 'ful'", sw.report.json, { 1 }, { ful = true })
    end)

    it("checks a Monte Carlo spread's keys", function()
      local net = supply_circuit()
      raises("segwise.network:montecarlo: RA: unknown option 'dist'", net.montecarlo, net,
        { RA = { tol = 0.05, dist = "normal" } }, { runs = 2 })
    end)
  end)

  describe("Monte Carlo statistics", function()
    -- spreads so small that sum-of-squares formulas cancel
    for _, spread in ipairs { 1e-6, 1e-8 } do
      it(("agrees with a two-pass sd at a relative spread of %g "
        .. "(table form)"):format(spread), function()
        local net = supply_circuit(5, 1000)
        local mc = net:montecarlo({ RA = spread }, { runs = 400, seed = 11 })
        for _, key in ipairs { "i", "v", "p" } do
          local xs = {}
          for k, op in ipairs(mc.runs) do
            xs[k] = key == "v" and op.vd.DIODE or op[key].DIODE
          end
          local mean, sd = two_pass(xs)
          assert.is_true(sd > 0)
          -- both are exact to a few ulps of the spread: 1e-6 relative is ample
          assert.is.near(sd, mc.sd[key].DIODE, 1e-6 * sd)
          assert.is.near(mean, mc.mean[key].DIODE, 1e-12 * math.abs(mean))
        end
      end)
    end

    it("gives the same statistics in the table and the array forms", function()
      local net = supply_circuit(5, 1000)
      local mc = net:montecarlo({ RA = 1e-7 }, { runs = 300, seed = 5 })
      local arr = net:montecarlo({ RA = 1e-7 }, { runs = 300, seed = 5, out = { "i.DIODE" } })
      local st = arr.stats["i.DIODE"]
      -- the same draws through the same update: equal to rounding
      assert.is.near(st.sd, mc.sd.i.DIODE, 1e-9 * st.sd)
      assert.is.near(st.mean, mc.mean.i.DIODE, 1e-15)
    end)
  end)

  describe("Monte Carlo tolerances that would make a resistor non-positive", function()
    it("refuses a uniform tolerance of 1 or more before the first run, naming it", function()
      local net = supply_circuit()
      local err = raises("segwise.network:montecarlo: RA", net.montecarlo, net, { RA = 1 },
        { runs = 10 })
      assert.is_falsy(err:find("run %d"), err)
      raises("tolerance 1.5", net.montecarlo, net, { RA = { tol = 1.5 } }, { runs = 10 })
    end)

    it("refuses a normal sd of 1/6 or more, saying why", function()
      local net = supply_circuit()
      local err = raises("RA", net.montecarlo, net, { RA = { sd = 0.2 } }, { runs = 10 })
      assert.is_truthy(err:find("1/6", 1, true), err)
      assert.is_truthy(#net:montecarlo({ RA = { sd = 0.1 } }, { runs = 20 }).runs == 20)
    end)

    it("lets a source's value change sign", function()
      local net = supply_circuit()
      local mc = net:montecarlo({ VS = 1.5 }, { runs = 20, seed = 2 })
      assert.are.equal(20, #mc.runs)
    end)
  end)

  describe("labels and the solver's account", function()
    -- Thevenin form of a segment: v = e + r*i; Norton form: i = j + g*v.
    local function csv_rows(text)
      local lines = {}
      for l in text:gmatch("[^\n]+") do lines[#lines + 1] = l end
      local head = {}
      for h in lines[1]:gmatch("[^,]+") do head[#head + 1] = h end
      local rows = {}
      for k = 2, #lines do
        local r, j = {}, 0
        for c in (lines[k] .. ","):gmatch("([^,]*),") do j = j + 1; r[head[j]] = tonumber(c) end
        rows[#rows + 1] = r
      end
      return rows, head
    end

    it("labels an i(v) model's Thevenin columns in volts and ohms", function()
      local m = diode_model() -- i(v): segment 2 is i = 1e-4 + 0.0995 (v - 0.6)
      local rows = csv_rows(sw.report.fit_table(m,
        { x = "V", y = "A", format = "csv", full = true }))
      local s = m:seg(2)
      -- v = -a/b + i/b for i = a + b v (algebra)
      assert.is.near(-s.intercept / s.slope, rows[2]["e (V)"], 1e-12)
      assert.is.near(1 / s.slope, rows[2]["r (Ω)"], 1e-9)
      assert.is.near(s.intercept, rows[2]["j (A)"], 1e-15)
      assert.is.near(s.slope, rows[2]["g (S)"], 1e-15)
      local text = sw.report.fit_table(m, { x = "V", y = "A" })
      assert.is_truthy(text:find("v = e + r*i (Thevenin)", 1, true), text)
      assert.is_falsy(text:find("r (mS)", 1, true), text)
    end)

    it("labels a v(i) model's Thevenin columns as its own slope and intercept", function()
      local m = sw.pwl { x = { 0, 0.01, 0.1 }, y = { 0.5, 0.7, 0.9 } } -- v(i)
      local rows = csv_rows(sw.report.fit_table(m,
        { x = "A", y = "V", format = "csv", full = true }))
      local s = m:seg(2)
      assert.is.near(s.intercept, rows[2]["e (V)"], 1e-15)
      assert.is.near(s.slope, rows[2]["r (Ω)"], 1e-12)
      assert.is.near(-s.intercept / s.slope, rows[2]["j (A)"], 1e-12)
    end)

    it("says what happened at each attempt of the assumed-state method", function()
      local op = supply_circuit():solve { trace = true, start = { DIODE = 1 } }
      local t = op.trace
      assert.are.equal(2, #t)
      assert.are.equal("moved", t[1].event)
      assert.are.same({ { device = "DIODE", from = 1, to = 2 } }, t[1].moves)
      assert.are.equal("converged", t[2].event)
      assert.is_truthy(tostring(t):find("re-assign: DIODE -> segment 2", 1, true), tostring(t))
    end)

    -- an NDR model (invented): the load line of 0.38 V / 1 ohm crosses it at 0.095, 0.18
    -- and 0.312 V
    local function ndr_circuit()
      local m = sw.pwl { x = { 0, 0.1, 0.3, 0.6 }, y = { 0, 0.3, 0.05, 0.5 } }
      return sw.network():vsource("VS", "in", "0", 0.38):resistor("RA", "in", "a", 1)
        :element("NDR", "a", "0", m)
    end

    it("counts operating points where the method counts them", function()
      local net = ndr_circuit()
      assert.are.equal(3, net:solve().nfound)
      assert.are.equal(3, net:solve { method = "enumerate" }.nfound)
      local all = net:solve_all()
      assert.are.equal(3, #all)
      for _, op in ipairs(all) do assert.are.equal(3, op.nfound) end
      -- the assumed-state method stops at the first point: 0, not a count
      assert.are.equal(0, net:solve { method = "assumed" }.nfound)
    end)

    it("prints the demo's fit table with one unit per column", function()
      local dir = helpers.tmpname()
      local cmd = ("LUA_PATH=%q LUA_CPATH=%q lua5.4 examples/demo_study.lua %q 2>&1")
        :format(package.path, package.cpath, dir)
      local pipe = assert(io.popen(cmd))
      local out = pipe:read("a")
      pipe:close()
      os.execute(("rm -rf %q"):format(dir))
      local block = out:match("\nseg  from[^\n]*\n[^\n]*\n(.-)\n\n")
      assert.is_truthy(block, out)
      for line in block:gmatch("[^\n]+") do
        for cell in line:gmatch("%S+") do
          -- a unit-free number or a dash: the unit is in the header
          assert.is_truthy(tonumber(cell) or cell == "\u{2014}",
            ("cell %q in %q"):format(cell, line))
        end
      end
    end)
  end)

  describe("cautions grouped in printed reports", function()
    -- eight cells in series, cell k conducting k times as much as cell 1 at
    -- the same voltage: 120 mA drives each beyond its 0.6 V knot, cell 1 most
    local function string_of_cells(count)
      local net = sw.network():vsource("VS", "in", "0", 20):resistor("RA", "in", "n0", 100)
      for k = 1, count do
        local m = sw.pwl { x = { 0, 0.5, 0.6 }, y = { 0, 1e-4 * k, 1e-2 * k } }
        net:element(("CELL%02d"):format(k), "n" .. (k - 1), k == count and "0" or "n" .. k, m)
      end
      return net
    end

    it("keeps one warning per cell but prints one grouped line with the worst", function()
      local net = string_of_cells(8)
      local op = net:solve()
      local n = 0
      for _, w in ipairs(op.warnings) do
        if w:find("outside its model's knots", 1, true) then n = n + 1 end
      end
      assert.are.equal(8, n)
      -- the worst: the largest distance beyond the 0.6 V knot
      local worst, far = nil, -1
      for k = 1, 8 do
        local name = ("CELL%02d"):format(k)
        if op.vd[name] - 0.6 > far then worst, far = name, op.vd[name] - 0.6 end
      end
      local text = sw.report.op_table(op)
      local lines = {}
      for l in text:gmatch("[^\n]+") do
        if l:find("knots", 1, true) then lines[#lines + 1] = l end
      end
      assert.are.equal(1, #lines, text)
      assert.is_truthy(lines[1]:find("8 devices", 1, true), lines[1])
      assert.is_truthy(lines[1]:find("worst " .. worst, 1, true), lines[1])
      assert.is_truthy(lines[1]:find("more", 1, true), lines[1]) -- names abbreviated
    end)

    it("prints a few cautions one by one", function()
      local op = string_of_cells(2):solve()
      local text = sw.report.op_table(op)
      local n = 0
      for l in text:gmatch("[^\n]+") do if l:find("knots", 1, true) then n = n + 1 end end
      assert.are.equal(2, n, text)
    end)
  end)
end)
