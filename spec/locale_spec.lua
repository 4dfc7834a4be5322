-- Numbers as text in any numeric locale (csrc/core/text/textloc.c on the C side,
-- lua/segwise/report/num.lua on the Lua side).  A host may switch LC_NUMERIC to a
-- decimal-comma locale; every file, table, plot and SI text must be byte for byte what
-- the C locale gives, and every reader must take '.' numbers only.
local sw = require "segwise"
local files = require "helpers.files"

local dir = files.tmpdir()
local slurp = files.read_all

-- A locale whose printf writes a decimal comma: de_DE.UTF-8 (the Makefile's
-- deps-locale generates it), else any such locale `locale -a` lists.
local function comma_locale()
  local names = { "de_DE.UTF-8", "de_DE.utf8" }
  for _, n in ipairs(files.lines_of("locale -a 2>/dev/null")) do names[#names + 1] = n end
  for _, n in ipairs(names) do
    if os.setlocale(n, "numeric") then
      local comma = string.format("%.1f", 0.5) == "0,5"
      os.setlocale("C", "numeric")
      if comma then return n end
    end
  end
  return nil
end
local COMMA = comma_locale()

-- f() under the comma locale, the locale restored whatever happens.
local function in_comma(f, ...)
  assert(os.setlocale(COMMA, "numeric"))
  local res = table.pack(pcall(f, ...))
  os.setlocale("C", "numeric")
  if not res[1] then error(res[2], 0) end
  return table.unpack(res, 2, res.n)
end

-- Bitwise-equal segments.
local function same_model(a, b)
  assert.are.equal(a:nseg(), b:nseg())
  for k = 1, a:nseg() do
    local s, t = a:seg(k), b:seg(k)
    for _, key in ipairs { "lo", "hi", "slope", "y_lo", "y_hi" } do
      assert.are.equal(s[key], t[key])
    end
  end
end

describe("numbers as text under a decimal-comma locale", function()
  if not COMMA then
    it("needs a decimal-comma locale", function()
      pending("no locale with a decimal comma is installed (make deps-locale makes one)")
    end)
    return
  end

  after_each(function() os.setlocale("C", "numeric") end)

  it("the locale really writes commas (else this spec proves nothing)", function()
    in_comma(function() assert.are.equal("0,25", string.format("%.2f", 0.25)) end)
  end)

  describe("model files", function()
    -- values whose %.17g text has 17 digits, over many decades
    local x, y = { -3.3e-7 }, { 1 / 3 }
    for i = 2, 40 do
      x[i] = x[i - 1] + 10 ^ (i % 9 - 6) * (1 + 1 / i)
      y[i] = math.sin(i) * 10 ^ (i % 7 - 3)
    end
    local m = sw.pwl { x = x, y = y }

    it("save writes the same bytes as in the C locale, and loads back bit-exact", function()
      local c_path, de_path = dir .. "/c.csv", dir .. "/de.csv"
      m:save(c_path, { x_unit = "V", y_unit = "A" })
      in_comma(function() m:save(de_path, { x_unit = "V", y_unit = "A" }) end)
      assert.are.equal(slurp(c_path), slurp(de_path))
      same_model(m, in_comma(sw.pwl.load, de_path))
      same_model(m, sw.pwl.load(de_path))
    end)

    it("a saved data row has four '.' numbers, no decimal comma", function()
      local path = dir .. "/rows.csv"
      in_comma(function() m:save(path) end)
      local rows = 0
      for line in slurp(path):gmatch("[^\n]+") do
        if not line:find("^#") and not line:find("^x,") then
          rows = rows + 1
          assert.matches("^[-+0-9.e]+,[-+0-9.e]+,[-+0-9.e]+,[-+0-9.e]+$", line)
        end
      end
      assert.are.equal(#x, rows)
    end)

    it("a fit's provenance (its numbers) survives a save and load in the comma locale", function()
      local d = sw.curve.diode { is = 2.5e-9, n = 1.9, rs = 0.6 }
      local fit = sw.fit(d, { lo = 0.6, hi = 0.8, segments = 4 })
      local path = dir .. "/prov.csv"
      local info = in_comma(function()
        fit:save(path)
        return sw.pwl.load(path):fit_info()
      end)
      local want = fit:fit_info()
      for _, key in ipairs { "lo", "hi", "max_abs", "x_abs" } do
        assert.are.equal(want[key], info[key])
      end
      assert.are.equal(0.6, info.lo) -- the range as given
    end)
  end)

  describe("data files", function()
    -- 25 significant digits: past every fast path, so the reader's strtod is asked
    local long = "0.1234567890123456789012345"
    local path = dir .. "/long.csv"
    local f = assert(io.open(path, "wb"))
    f:write("x,y\n", long, ",1.5\n", "2.000000000000000000000000001,2.5e-3\n")
    f:close()

    it("curve.read takes long '.' numbers as in the C locale", function()
      local c = in_comma(sw.curve.read, path)
      local lo, hi = c:domain()
      assert.are.equal(tonumber(long), lo) -- tonumber here runs in the C locale
      assert.are.equal(2.0, hi)
      assert.are.equal(1.5, c(lo))
    end)

    it("array.read too", function()
      local a = in_comma(sw.array.read, path, "y")
      assert.are.equal(1.5, a[1])
      assert.are.equal(2.5e-3, a[2])
    end)
  end)

  describe("SI text", function()
    it("si prints a '.' point and parse_si reads only '.'", function()
      in_comma(function()
        assert.are.equal("4.31 mA", sw.si(0.00431, "A"))
        assert.are.equal("-1.5e+300 V", sw.si(-1.5e300, "V"))
        assert.are.equal(4700, sw.parse_si("4.7k"))
        assert.are.equal(4700, sw.parse_si("4k7"))
        assert.has_error(function() sw.parse_si("4,7k") end)
      end)
    end)
  end)

  describe("tables, JSON and plots are the C locale's text", function()
    local rows = { { v = 0.65, i = 1.25e-3, n = 3 }, { v = 0.7, i = 2.5e-3, n = 4 } }
    local cols = { { name = "v", unit = "V" }, { name = "i", unit = "A" }, "n" }
    local spec = {
      title = "diode", x = { label = "v", unit = "V" }, y = { label = "i", unit = "A" },
      series = { { x = { 0.6, 0.65, 0.7 }, y = { 0.5e-3, 1.25e-3, 2.5e-3 }, label = "i(v)" } },
      marks = { { x = 0.65, y = 1.25e-3, label = "op" } },
    }
    local cases = {
      { "report.table csv", function() return sw.report.table(rows, cols, { format = "csv" }) end },
      { "report.table text", function() return sw.report.table(rows, cols) end },
      { "report.table markdown",
        function() return sw.report.table(rows, cols, { format = "markdown" }) end },
      { "report.table with fmt",
        function() return sw.report.table(rows, { { name = "v", fmt = "%.3f" } }) end },
      { "report.json", function() return sw.report.json(rows) end },
      { "plot.svg_string", function() return sw.plot.svg_string(spec) end },
      { "plot.term", function() return sw.plot.term(spec, { width = 80, print = false }) end },
    }
    for _, case in ipairs(cases) do
      it(case[1], function()
        local want = case[2]()
        assert.are.equal(want, in_comma(case[2]))
        if not case[1]:find("csv") then assert.is_nil(want:find("%d,%d")) end -- no decimal comma
      end)
    end

    it("plot.svg and report.table{out =} write the same files", function()
      sw.plot.svg(dir .. "/c.svg", spec)
      in_comma(sw.plot.svg, dir .. "/de.svg", spec)
      assert.are.equal(slurp(dir .. "/c.svg"), slurp(dir .. "/de.svg"))
      sw.report.table(rows, cols, { format = "csv", out = dir .. "/c.txt" })
      in_comma(sw.report.table, rows, cols, { format = "csv", out = dir .. "/de.txt" })
      assert.are.equal(slurp(dir .. "/c.txt"), slurp(dir .. "/de.txt"))
    end)
  end)

  describe("segwise.report.num", function()
    local num = require "segwise.report.num"
    it("fixes only numeric conversions; text and %s strings keep their commas", function()
      in_comma(function()
        assert.are.equal("a,b 1.5 3%  2.25|0.5  |",
          num.format("%s %.3g %d%% %5.2f|%-5s|", "a,b", 1.5, 3, 2.25, 0.5))
        assert.are.equal("1.0", num.str(1.0))
        assert.are.equal(1.5, num.tonumber("1.5"))
        assert.is_nil(num.tonumber("1,5"))
        local long = "0." .. string.rep("3", 300) -- Lua's own fallback stops at 200 bytes
        assert.is_near(1 / 3, num.tonumber(long), 1e-16)
      end)
    end)
  end)
end)
