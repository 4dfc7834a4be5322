-- The bad-input matrix: every case must raise a Lua error (never crash the
-- host) whose message starts "segwise." and names the culprit: the argument,
-- option, index, element, node or file line at fault.  Cases are grouped by
-- area in tables of { what, function, pattern naming the culprit }.
local sw = require "segwise"

local NAN, INF = 0 / 0, math.huge

-- Scratch files for the reader cases, removed at the end.
local tmpdir, file = require("helpers.files").tmpdir()

local function model() return sw.pwl { x = { 0, 1, 2 }, y = { 0, 1, 3 } } end
local function diode() return sw.curve.diode { is = 1e-14, n = 1, rs = 0.5 } end
local function samples() return sw.curve.samples({ 0, 1, 2, 3 }, { 0, 1, 4, 9 }) end
local function freed(obj) obj:free(); return obj end

-- A small circuit: 5 V, 1 kohm and a diode-like element.
local function circuit()
  local net = sw.network()
  net:vsource("VIN", "in", "0", 5)
  net:resistor("RSER", "in", "a", 1000)
  net:element("DIODE", "a", "0", sw.pwl { x = { -1, 0.6, 0.8 }, y = { 0, 0, 0.1 } })
  return net
end

-- The same with VIN = -50 V and a model bounded at its ends (extend = "error").
local function bounded()
  local net = sw.network()
  net:vsource("VIN", "in", "0", -50)
  net:resistor("RSER", "in", "a", 1000)
  net:element("DIODE", "a", "0",
    sw.pwl { x = { -1, 0.6, 0.8 }, y = { 0, 0, 0.1 }, extend = "error" })
  return net
end

local function run_cases(cases)
  for _, case in ipairs(cases) do
    it(case[1], function()
      local t0 = os.clock()
      local ok, msg = pcall(case[2])
      assert.is_false(ok, "expected an error for: " .. case[1])
      assert.is_string(msg)
      -- the user's own error (a callback that raises) and Lua's own C-stack
      -- limit pass through as they are; everything else carries the prefix
      if not case.raw then assert.matches("segwise%.", msg) end
      assert.matches(case[3], msg)
      -- every refusal is fast: absurd sizes are rejected before any work
      assert.is_true(os.clock() - t0 < 2, "took too long: " .. case[1])
    end)
  end
end

describe("segwise bad input", function()
  teardown(function() os.execute("rm -rf '" .. tmpdir .. "'") end)

  describe("sw.curve.samples", function()
    run_cases {
      { "xs nil", function() sw.curve.samples(nil, { 1, 2 }) end, "xs must be a table" },
      { "xs a string", function() sw.curve.samples("1,2", { 1, 2 }) end, "xs must be a table" },
      { "ys nil", function() sw.curve.samples({ 1, 2 }, nil) end, "ys must be a table" },
      { "NaN in xs", function() sw.curve.samples({ 0, NAN, 2 }, { 1, 2, 3 }) end, "xs%[2%]" },
      { "Inf in ys", function() sw.curve.samples({ 0, 1, 2 }, { 1, 2, INF }) end, "ys%[3%]" },
      { "-Inf in xs", function() sw.curve.samples({ -INF, 1, 2 }, { 1, 2, 3 }) end, "xs%[1%]" },
      { "a text element",
        function() sw.curve.samples({ 0, 1, "two" }, { 1, 2, 3 }) end, "xs%[3%]" },
      { "mismatched lengths", function() sw.curve.samples({ 0, 1, 2 }, { 1, 2 }) end, "3.*2" },
      { "one element", function() sw.curve.samples({ 1 }, { 1 }) end, "at least 2" },
      { "empty tables", function() sw.curve.samples({}, {}) end, "at least 2" },
      { "unsorted without sort",
        function() sw.curve.samples({ 0, 2, 1 }, { 0, 1, 2 }) end, "x%[3%]" },
      { "repeated x",
        function() sw.curve.samples({ 0, 1, 1, 2 }, { 0, 1, 2, 3 }) end, "x%[2%] and x%[3%]" },
      { "options not a table",
        function() sw.curve.samples({ 0, 1 }, { 0, 1 }, "sort") end, "options must be a table" },
      { "unknown option",
        function() sw.curve.samples({ 0, 1 }, { 0, 1 }, { sorted = true }) end,
        "unknown option 'sorted'" },
      { "duplicates not a choice",
        function() sw.curve.samples({ 0, 1 }, { 0, 1 }, { duplicates = "max" }) end,
        "option duplicates" },
    }
  end)

  describe("sw.curve laws and functions", function()
    run_cases {
      { "diode without is", function() sw.curve.diode { n = 1 } end, "is" },
      { "diode negative is", function() sw.curve.diode { is = -1e-14 } end, "is must be" },
      { "diode NaN ideality", function() sw.curve.diode { is = 1e-14, n = NAN } end, "n" },
      { "diode negative rs", function() sw.curve.diode { is = 1e-14, rs = -1 } end, "rs" },
      { "diode vt and temp",
        function() sw.curve.diode { is = 1e-14, vt = 0.025, temp = 300 } end, "vt or temp" },
      { "diode x not v or i", function() sw.curve.diode { is = 1e-14, x = "q" } end, "option x" },
      { "diode opts not a table", function() sw.curve.diode(1e-14) end, "options must be a table" },
      { "power k = 0", function() sw.curve.power { k = 0, n = 2 } end, "k" },
      { "power negative n", function() sw.curve.power { k = 1, n = -1 } end, "n must be" },
      { "power n a string", function() sw.curve.power { k = 1, n = "2" } end, "option n" },
      { "fn f not a function",
        function() sw.curve.fn(42, { lo = 0, hi = 1 }) end, "f must be a function" },
      { "fn lo >= hi", function() sw.curve.fn(math.sin, { lo = 1, hi = 1 }) end, "lo" },
      { "fn missing hi", function() sw.curve.fn(math.sin, { lo = 0 }) end, "hi" },
      { "fn lo = -Inf", function() sw.curve.fn(math.sin, { lo = -INF, hi = 1 }) end, "lo" },
      { "fn hi NaN", function() sw.curve.fn(math.sin, { lo = 0, hi = NAN }) end, "hi" },
    }
  end)

  describe("curve evaluation and callbacks", function()
    run_cases {
      { "x outside the samples' domain", function() samples():eval(7) end, "7" },
      { "x a string", function() samples():eval("one") end, "x must be" },
      { "x NaN", function() samples():eval(NAN) end, "x" },
      { "deriv outside the domain", function() samples():deriv(-1) end, "%-1" },
      { "v(i) diode below -is",
        function() sw.curve.diode { is = 1e-12, x = "i" }:eval(-1) end, "%-1" },
      { "callback raises", function()
        sw.curve.fn(function() error("meter offline") end, { lo = 0, hi = 1 }):eval(0.5)
      end, "meter offline", raw = true },
      { "callback returns nil", function()
        sw.curve.fn(function() return nil end, { lo = 0, hi = 1 }):eval(0.5)
      end, "nil" },
      { "callback returns a string", function()
        sw.curve.fn(function() return "x" end, { lo = 0, hi = 1 }):eval(0.5)
      end, "string" },
      { "callback returns NaN", function()
        sw.curve.fn(function() return NAN end, { lo = 0, hi = 1 }):eval(0.5)
      end, "NaN" },
      { "callback recursing without end", function()
        local c
        c = sw.curve.fn(function(x) return c(x) end, { lo = 0, hi = 1 })
        c(0.5)
      end, "overflow", raw = true },
      { "curve used after free", function() freed(samples()):eval(1) end, "free" },
      { "freed curve's domain", function() freed(diode()):domain() end, "free" },
    }

    it("a callback may call segwise re-entrantly", function()
      local inner = sw.pwl { x = { 0, 1 }, y = { 0, 2 } }
      local c = sw.curve.fn(function(x) return inner(x) + samples()(x) end, { lo = 0, hi = 1 })
      -- inner(0.5) = 1, samples at 0.5 = 0.5 (linear between samples)
      assert.is.near(1.5, c(0.5), 1e-15)
    end)
  end)

  if sw.array then
    describe("sw.array", function()
      run_cases {
        { "size 1e12 fails fast", function() sw.array(1e12) end, "size 1000000000000" },
        { "negative size", function() sw.array(-1) end, "size %-1" },
        { "fractional size", function() sw.array(0.5) end, "size 0%.5" },
        { "a text element", function() sw.array { 1, "x" } end, "%[2%]" },
        { "index out of range", function() local a = sw.array(3); a[5] = 1 end, "index 5" },
        { "a text value", function() local a = sw.array(3); a[1] = "x" end, "%[1%]" },
        { "used after free", function() local a = sw.array(3); a:free(); return a[1] end, "free" },
      }
    end)
  end

  describe("sw.pwl", function()
    run_cases {
      { "not a table", function() sw.pwl(5) end, "options must be a table" },
      { "x missing", function() sw.pwl { y = { 1, 2 } } end, "x and y" },
      { "mismatched lengths", function() sw.pwl { x = { 0, 1, 2 }, y = { 0, 1 } } end, "3.*2" },
      { "one point", function() sw.pwl { x = { 0 }, y = { 0 } } end, "at least 2" },
      { "empty", function() sw.pwl { x = {}, y = {} } end, "at least 2" },
      { "repeated knot", function() sw.pwl { x = { 0, 1, 1 }, y = { 0, 1, 2 } } end, "x%[3%]" },
      { "unsorted knots", function() sw.pwl { x = { 0, 2, 1 }, y = { 0, 1, 2 } } end, "x%[3%]" },
      { "NaN ordinate", function() sw.pwl { x = { 0, 1 }, y = { NAN, 1 } } end, "y%[1%]" },
      { "-Inf knot", function() sw.pwl { x = { -INF, 1 }, y = { 0, 1 } } end, "x%[1%]" },
      { "extend not a choice",
        function() sw.pwl { x = { 0, 1 }, y = { 0, 1 }, extend = "wrap" } end, "option extend" },
      { "segments: empty list", function() sw.pwl.segments {} end, "at least 1" },
      { "segments: not joined", function()
        sw.pwl.segments { { lo = 0, hi = 1, slope = 1, intercept = 0 },
                          { lo = 2, hi = 3, slope = 1, intercept = 0 } }
      end, "join" },
      { "segments: lo >= hi",
        function() sw.pwl.segments { { lo = 1, hi = 1, slope = 1, intercept = 0 } } end, "1" },
      { "segments: NaN slope",
        function() sw.pwl.segments { { lo = 0, hi = 1, slope = NAN, intercept = 0 } } end,
        "slope" },
      { "segments: entry not a table", function() sw.pwl.segments { 5 } end, "segment 1" },
    }
  end)

  describe("model methods", function()
    run_cases {
      { "eval of a string", function() model():eval("a") end, "x must be" },
      { "eval of a table with a string", function() model():eval { 1, "x" } end, "%[2%]" },
      { "eval outside under extend = error", function()
        sw.pwl { x = { 0, 1 }, y = { 0, 1 }, extend = "error" }(5)
      end, "5" },
      { "seg(0)", function() model():seg(0) end, "index 0" },
      { "seg(99)", function() model():seg(99) end, "index 99" },
      { "thevenin(3) of a 2-segment model", function() model():thevenin(3) end, "index 3" },
      { "norton of a flat segment",
        function() sw.pwl { x = { 0, 1 }, y = { 1, 1 } }:norton(1) end, "1" },
      { "inverse of a non-monotone model",
        function() sw.pwl { x = { 0, 1, 2 }, y = { 0, 1, 0 } }:inverse() end, "monoton" },
      { "inverse of a discontinuous model", function()
        sw.pwl.segments { { lo = 0, hi = 1, slope = 1, intercept = 0 },
                          { lo = 1, hi = 2, slope = 1, intercept = 5 } }:inverse()
      end, "continuous" },
      { "canonical of a discontinuous model", function()
        sw.pwl.segments { { lo = 0, hi = 1, slope = 1, intercept = 0 },
                          { lo = 1, hi = 2, slope = 1, intercept = 5 } }:canonical()
      end, "continuous" },
      { "compare with a non-curve", function() model():compare(5) end, "#2.*curve" },
      { "compare lo >= hi", function() model():compare(samples(), { lo = 2, hi = 1 }) end, "lo" },
      { "compare outside the curve's domain",
        function() model():compare(samples(), { lo = -5, hi = 1 }) end, "domain" },
      { "compare n = 0",
        function() model():compare(diode(), { lo = 0, hi = 0.7, n = 0 }) end, "n" },
      { "compare n = -5",
        function() model():compare(diode(), { lo = 0, hi = 0.7, n = -5 }) end, "n" },
      { "compare n = 1e12 fails fast",
        function() model():compare(diode(), { lo = 0, hi = 0.7, n = 1e12 }) end, "n" },
      { "compare unknown option",
        function() model():compare(samples(), { points = 5 }) end, "unknown option 'points'" },
      { "compare with a freed curve", function() model():compare(freed(samples())) end, "free" },
      { "model used after free", function() freed(model())(1) end, "free" },
      { "nseg after free", function() freed(model()):nseg() end, "free" },
      { "inverse after free", function() freed(model()):inverse() end, "free" },
    }

    it("free is idempotent and __close works", function()
      local m = model()
      m:free()
      m:free()
      do local c <close> = samples() end
      assert.matches("freed", tostring(m))
    end)
  end)

  if sw.fit then
    describe("sw.fit", function()
      local function fn_curve(f) return sw.curve.fn(f, { lo = 0, hi = 1 }) end
      run_cases {
        { "curve not a curve", function() sw.fit(model(), { segments = 2 }) end, "curve must be" },
        { "segments = 0", function() sw.fit(samples(), { segments = 0 }) end, "segments" },
        { "segments negative", function() sw.fit(samples(), { segments = -3 }) end, "segments" },
        { "segments fractional", function() sw.fit(samples(), { segments = 2.5 }) end, "segments" },
        { "segments = 1e12 fails fast",
          function() sw.fit(diode(), { lo = 0, hi = 0.7, segments = 1e12 }) end, "segments" },
        { "segments more than samples",
          function() sw.fit(samples(), { segments = 10 }) end, "segments" },
        { "tol = 0", function() sw.fit(samples(), { tol = 0 }) end, "tol" },
        { "tol NaN", function() sw.fit(samples(), { tol = NAN }) end, "tol" },
        { "segments and tol",
          function() sw.fit(samples(), { segments = 2, tol = 0.1 }) end, "segments or tol" },
        { "lo >= hi", function() sw.fit(samples(), { lo = 2, hi = 2 }) end, "lo" },
        { "lo = -Inf", function() sw.fit(samples(), { lo = -INF }) end, "lo" },
        { "range outside the domain",
          function() sw.fit(samples(), { lo = -1, hi = 2 }) end, "domain" },
        { "unbounded law without a range",
          function() sw.fit(diode(), { segments = 3 }) end, "lo and hi" },
        { "criterion not a choice",
          function() sw.fit(samples(), { criterion = "best" }) end, "option criterion" },
        { "knots scheme unknown", function() sw.fit(samples(), { knots = "random" }) end, "knots" },
        { "knot list unsorted",
          function() sw.fit(samples(), { knots = { 0, 2, 1, 3 } }) end, "knots%[3%]" },
        { "knot outside the range",
          function() sw.fit(samples(), { knots = { 0, 5 } }) end, "knots%[2%]" },
        { "knot NaN", function() sw.fit(samples(), { knots = { 0, NAN, 3 } }) end, "knots%[2%]" },
        { "grid = 1", function() sw.fit(diode(), { lo = 0, hi = 0.7, grid = 1 }) end, "grid" },
        { "unknown option",
          function() sw.fit(samples(), { segs = 2 }) end, "unknown option 'segs'" },
        { "freed curve", function() sw.fit(freed(samples()), { segments = 2 }) end, "free" },
        { "callback raises",
          function() sw.fit(fn_curve(function() error("probe lost") end), { segments = 2 }) end,
          "probe lost", raw = true },
        { "callback returns nil",
          function() sw.fit(fn_curve(function() end), { segments = 2 }) end, "nil" },
        { "callback returns NaN",
          function() sw.fit(fn_curve(function() return NAN end), { segments = 2 }) end, "NaN" },
        -- fuzzer find: a denormal rel_floor made the error level overflow and
        -- the fit return an empty model as a success
        { "rel_floor so small the error level overflows",
          function()
            sw.fit(sw.curve.power { k = 1, n = 0.25 },
              { lo = 0, hi = 5e-12, error = "rel", rel_floor = 1e-315, tol = 0.5 })
          end,
          "error scale.*rel_floor" },
      }

      it("a callback may run a fit re-entrantly", function()
        local inner = sw.fit(samples(), { segments = 3 })
        local c = fn_curve(function(x)
          local m = sw.fit(samples(), { segments = 3 })
          return m(x * 3) - inner(x * 3)
        end)
        -- both fits see the same data, so the difference is exactly 0
        local m = sw.fit(c, { segments = 2, grid = 17 })
        assert.is.near(0, m(0.5), 1e-12)
      end)
    end)
  end

  if sw.curve.read then
    describe("sw.curve.read and model files", function()
      local good = file("good.csv", "I_A,V_V\n0.001,0.6\n0.002,0.63\n0.004,0.66\n")
      run_cases {
        { "path nil", function() sw.curve.read(nil) end, "path must be a string" },
        { "missing file", function() sw.curve.read(tmpdir .. "/nope.csv") end, "nope%.csv" },
        { "a directory", function() sw.curve.read(tmpdir) end, tmpdir:gsub("%p", "%%%0") },
        { "a path through a plain file", function() sw.curve.read(good .. "/x.csv") end, "x%.csv" },
        { "array.read of a missing file",
          function() sw.array.read(tmpdir .. "/gone.csv", 1) end, "gone%.csv" },
        { "empty file", function() sw.curve.read(file("empty.csv", "")) end, "empty%.csv" },
        { "ragged row",
          function() sw.curve.read(file("ragged.csv", "x,y\n1,2\n3\n4,5\n"), { x = 1, y = 2 }) end,
          "ragged%.csv:3" },
        { "text in a number column",
          function() sw.curve.read(file("text.csv", "x,y\n1,2\n3,abc\n")) end, "text%.csv:3" },
        { "missing header name",
          function() sw.curve.read(good, { x = "I_A", y = "V_mV" }) end, "V_mV" },
        { "binary junk",
          function() sw.curve.read(file("junk.bin", "\0\1\2\255\254,\128\n\0\0")) end,
          "junk%.bin" },
        { "column 0", function() sw.curve.read(good, { x = 0, y = 2 }) end, "0" },
        { "column 9 of 2", function() sw.curve.read(good, { x = 1, y = 9 }) end, "9" },
        { "column a float", function() sw.curve.read(good, { x = 1.5 }) end, "x must be" },
        { "unknown option",
          function() sw.curve.read(good, { column = 1 }) end, "unknown option 'column'" },
        { "scale not a number",
          function() sw.curve.read(good, { scale = { x = "milli" } }) end, "option x" },
        { "repeated x in a file",
          function() sw.curve.read(file("rep.csv", "1,2\n1,3\n2,4\n")) end, "rep%.csv" },
        { "model file missing",
          function() sw.pwl.load(tmpdir .. "/none.model") end, "none%.model" },
        { "model file malformed",
          function() sw.pwl.load(file("bad.model", "# segwise model\n0,1\nzz,2,3\n")) end,
          "bad%.model" },
      }
    end)
  end

  if sw.network then
    describe("sw.network", function()
      run_cases {
        { "negative resistance",
          function() sw.network():resistor("RSER", "a", "0", -5) end, "RSER" },
        { "zero resistance", function() sw.network():resistor("RSER", "a", "0", 0) end, "RSER" },
        { "NaN source", function() sw.network():vsource("VIN", "a", "0", NAN) end, "volts" },
        { "name not a string", function() sw.network():resistor({}, "a", "0", 1) end, "name" },
        { "node nil", function() sw.network():resistor("RSER", nil, "0", 1) end, "node 1" },
        { "duplicate name", function()
          sw.network():resistor("RSER", "a", "0", 1):resistor("RSER", "a", "0", 2)
        end, "RSER" },
        { "floating node", function()
          local net = circuit()
          net:resistor("RFLOAT", "x", "y", 10)
          net:solve()
        end, "x" },
        { "voltage-source loop", function()
          local net = circuit()
          net:vsource("VAUX", "in", "0", 3)
          net:solve()
        end, "VAUX" },
        { "current-source cut", function()
          local net = circuit()
          net:isource("ISRC", "0", "z", 1e-3)
          net:solve()
        end, "ISRC" },
        { "set of an unknown name", function() circuit():set("RGHOST", 5) end, "RGHOST" },
        { "set of a device", function() circuit():set("DIODE", 5) end, "DIODE" },
        { "cccs with an unknown control", function()
          local net = circuit()
          net:cccs("MIRROR", "a", "0", "Vx", 2)
          net:solve()
        end, "Vx" },
        { "element with a non-model",
          function() circuit():element("DIODE2", "a", "0", 5) end, "model" },
        { "element with a freed model",
          function() circuit():element("DIODE2", "a", "0", freed(model())) end, "free" },
        { "solve with an unknown method",
          function() circuit():solve { method = "newton" } end, "option method" },
        { "start names an unknown device",
          function() circuit():solve { start = { DGHOST = 1 } } end, "DGHOST" },
        { "start segment out of range",
          function() circuit():solve { start = { DIODE = 99 } } end, "99" },
        { "sweep of an unknown name",
          function() circuit():sweep("VGHOST", { 1, 2 }) end, "VGHOST" },
        { "sweep values with NaN", function() circuit():sweep("VIN", { 1, NAN }) end, "%[2%]" },
        -- regression (fuzzer, net harness): the assumed-state iteration once
        -- stepped a device past the last segment of a bounded model
        { "assumed state beyond a bounded model",
          function() bounded():solve { method = "assumed" } end, "DIODE needs v = %-50" },
        { "load line beyond a bounded model", function() bounded():solve() end, "DIODE" },
        { "lcp beyond a bounded model",
          function() bounded():solve { method = "lcp" } end, "DIODE" },
        { "enumerate beyond a bounded model",
          function() bounded():solve { method = "enumerate" } end, "no consistent state" },
        { "network used after free",
          function() local n = circuit(); n:free(); n:solve() end, "free" },
      }

      it("a network that failed to solve is fixed with set and solved again", function()
        local net = bounded()
        local ok, msg = pcall(net.solve, net)
        assert.is_false(ok)
        assert.matches("DIODE", msg)
        net:set("VIN", 5)
        local op = net:solve()
        -- KVL round the loop: 5 V = RSER drop + DIODE drop; KCL: one current
        -- flows through VIN, RSER and DIODE (Kirchhoff, common practice)
        assert.is.near(5, op.vd.RSER + op.vd.DIODE, 1e-9)
        assert.is.near(op.i.RSER, op.i.DIODE, 1e-12)
        assert.is.near(0, op.i.VIN + op.i.RSER, 1e-12)
      end)
    end)
  end

  describe("inputs that once crashed the host", function()
    -- Callbacks that free what is in use, and fuzzer finds: each runs in a
    -- child interpreter, so a crash fails the case, not the suite.
    -- The child prints the pcall result and exits 0 when nothing crashed.
    local lua = os.getenv("LUA") or "lua5.4"
    local function isolated(code)
      local path = file("child.lua", "local sw = require 'segwise'\n" .. code)
      local env = ("LUA_PATH=%q LUA_CPATH=%q "):format(package.path, package.cpath)
      local p = assert(io.popen(env .. lua .. " " .. path .. " 2>&1; echo \"exit=$?\""))
      local out = p:read("a")
      p:close()
      return out
    end
    local cases = {
      { "a compare callback frees the model being compared", [[
        local m = sw.pwl { x = { 0, 0.5, 1 }, y = { 0, 1, 2 } }
        local c = sw.curve.fn(function(x) m:free(); return x end, { lo = 0, hi = 1 })
        print(pcall(m.compare, m, c, { n = 50 }))]], "model" },
      { "a fit callback frees its own curve", [[
        local c
        c = sw.curve.fn(function(x) c:free(); return x * x end, { lo = 0, hi = 1 })
        print(pcall(sw.fit, c, { segments = 3 }))]], "free" },
      { "an eval callback frees its own curve", [[
        local c
        c = sw.curve.fn(function(x) c:free(); return x end, { lo = 0, hi = 1 })
        print(pcall(c.eval, c, 0.5))
        print(pcall(c.eval, c, 0.5))]], "free" },
    }
    if sw.network then
      cases[#cases + 1] = { "an exact-curve callback frees the network being solved", [[
        local net = sw.network()
        net:vsource("VIN", "in", "0", 5)
        net:resistor("RSER", "in", "a", 1000)
        local ex = sw.curve.fn(function(v) net:free(); return 1e-3 * v end, { lo = -1, hi = 1 })
        net:element("DIODE", "a", "0", sw.pwl { x = { -1, 0.6, 0.8 }, y = { 0, 0, 0.1 } }, ]]
        .. [[{ exact = ex })
        print(pcall(net.solve, net, { exact = true }))]], "free" }
      -- regression (fuzzer, net harness): a segment line whose intercept
      -- overflows was reported after its storage was freed
      cases[#cases + 1] = { "a device whose segment line overflows", [[
        local net = sw.network()
        net:vsource("VIN", "a", "0", 1)
        print(pcall(net.element, net, "DIODE", "a", "0", ]]
        .. [[sw.pwl { x = { 1e300, 1.5e300 }, y = { 0, 1e308 } }))]], "DIODE" }
    end
    for _, case in ipairs(cases) do
      it(case[1], function()
        local out = isolated(case[2])
        -- no crash: the child got to the end and exited normally
        assert.matches("exit=0", out, 1, true)
        assert.is_nil(out:find("ERROR: AddressSanitizer", 1, true), out)
        assert.is_nil(out:find("runtime error", 1, true), out)
        -- and the first call was refused with a message naming the object
        local first = out:match("^([^\n]*)")
        assert.matches("^false", first)
        assert.matches("segwise%.", first)
        assert.matches(case[3], first)
      end)
    end
  end)

  describe("nothing lost", function()
    -- A writer that cannot finish must leave the old file as it was.  The
    -- write runs in a child under a file-size limit of one 512-byte block, so
    -- it fails half way even for root (helpers.subproc).
    local subproc = require "helpers.subproc"
    local content = require("helpers.files").read_all
    local function cut_short(name, old, code)
      local path = file(name, old)
      local ok, out = subproc.lua('local sw = require "segwise"\nlocal path = '
        .. ("%q"):format(path) .. "\nprint(pcall(function() " .. code .. " end))\n", { fsize = 1 })
      assert.is_true(ok, out)
      assert.matches("^false", out)
      return path, out
    end
    local big = "local x, y = {}, {} for i = 1, 500 do x[i] = i; y[i] = i * i / 7 end "

    it("a failed model save keeps the old model file", function()
      local path, msg = cut_short("keep.model", "old model\n",
        big .. "sw.pwl { x = x, y = y }:save(path)")
      assert.matches("segwise%.model:save", msg)
      assert.matches("keep%.model", msg)
      assert.are.equal("old model\n", content(path))
    end)

    if sw.report then
      it("a failed report write keeps the old file", function()
        local path, msg = cut_short("keep.csv", "old,table\n",
          "sw.report.write(path, string.rep('new,text\\n', 1000))")
        assert.matches("keep%.csv", msg)
        assert.are.equal("old,table\n", content(path))
      end)
    end

    if sw.plot and sw.plot.svg then
      it("a failed plot keeps the old SVG", function()
        local path, msg = cut_short("keep.svg", "<svg/>\n",
          "sw.plot.svg(path, { series = { { x = { 0, 1 }, y = { 0, 1 } } } })")
        assert.matches("keep%.svg", msg)
        assert.are.equal("<svg/>\n", content(path))
      end)
    end

    -- an error should send the engineer to their own script's line
    it("errors point at the caller's line, not the library's", function()
      local here = debug.getinfo(1, "S").short_src
      local calls = {
        fit = function() local m = sw.fit(samples(), { segments = 10 }); return m end,
        ["curve.read"] = function() local c = sw.curve.read(tmpdir .. "/none.csv"); return c end,
        ["array.read"] = function() local a = sw.array.read(tmpdir .. "/none.csv", 1); return a end,
        ["pwl.load"] = function() local m = sw.pwl.load(tmpdir .. "/none.csv"); return m end,
        ["network:solve"] = function() local op = sw.network():solve(); return op end,
        pwl = function() local m = sw.pwl { x = { 0, 0 }, y = { 1, 2 } }; return m end,
      }
      for name, f in pairs(calls) do
        local ok, msg = pcall(f)
        assert.is_false(ok, name)
        assert.are.equal(1, msg:find(here .. ":", 1, true), name .. ": " .. msg)
        assert.is_truthy(msg:find("segwise." .. name .. ": ", 1, true), name .. ": " .. msg)
      end
    end)

    it("an error in one call leaves the objects usable", function()
      local m, c = model(), samples()
      assert.is_false(pcall(m.seg, m, 99))
      assert.is_false(pcall(m.compare, m, c, { lo = -5, hi = 1 }))
      assert.is_false(pcall(c.eval, c, 99))
      -- m = pwl through (0,0) (1,1) (2,3): m(1.5) = 2; samples of x^2: c(1.5) = 2.5
      assert.are.equal(2, m(1.5))
      assert.are.equal(2.5, c(1.5))
      if sw.fit then
        assert.is_false(pcall(sw.fit, c, { segments = 0 }))
        assert.are.equal(2, sw.fit(c, { segments = 2 }):nseg())
      end
    end)
  end)
end)
