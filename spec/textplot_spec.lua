-- Text and plot inputs at the edges: extreme numbers in sw.si, SVG sizes and ranges that
-- once raised internal errors or wrote -nan, labels with invalid UTF-8, terminal plots
-- linear in their width, model-file headers, CR-only line ends and endless streams.
local sw = require "segwise"
local files = require "helpers.files"

local dir, write = files.tmpdir()
local slurp, raises = files.read_all, files.raises

local function svg_parses(path)
  -- rsvg-convert (librsvg, one of make test's packages) refuses malformed XML
  return os.execute("rsvg-convert '" .. path .. "' > /dev/null 2>&1") == true
end

describe("sw.si at the edges of the number line", function()
  it("prints extreme integers as floats rounded to the digits asked", function()
    -- 2^63 = 9223372036854775808 (closed form): 9.22 exa
    assert.are.equal("-9.22E", sw.si(math.mininteger))
    assert.are.equal("9.22 EA", sw.si(math.maxinteger, "A"))
    assert.are.equal("-9.2233720368548 EV", sw.si(math.mininteger, "V", 14))
  end)

  it("prints huge, tiny, infinite and NaN values without raising", function()
    assert.are.equal("1.8e+308 V", sw.si(1.7976931348623157e308, "V", 2))
    assert.are.equal("-1e+308 V", sw.si(-1e308, "V"))
    assert.are.equal("4.94e-324 V", sw.si(4.9406564584124654e-324, "V")) -- smallest subnormal
    assert.are.equal("inf A", sw.si(math.huge, "A"))
    assert.are.equal("-inf A", sw.si(-math.huge, "A"))
    assert.are.equal("NaN A", sw.si(0 / 0, "A"))
  end)

  it("reads back what it prints within its rounding", function()
    for _, v in ipairs { math.mininteger, math.maxinteger, 1e308, -3.3e-300, 5e-324 } do
      local back = sw.parse_si(sw.si(v, "", 6))
      assert.is.near(v, back, math.abs(v + 0.0) * 5e-6) -- 6 significant digits
    end
  end)
end)

describe("plot.svg sizes and ranges", function()
  local series = { { x = { 0, 1, 2 }, y = { 0, 1, 4 }, label = "y" } }

  it("rounds a fractional width and height", function()
    local s = sw.plot.svg_string { width = 720.5, height = 450.4, series = series }
    assert.matches('width="721" height="450" viewBox="0 0 721 450"', s, 1, true)
  end)

  it("refuses sizes that are no numbers, too small, too big or not finite, naming them", function()
    for _, w in ipairs { "720", 99, 1e308, math.huge, 0 / 0 } do
      raises("segwise.plot.svg: width and height must be numbers from 100 and 80",
        sw.plot.svg_string, { width = w, series = series })
    end
  end)

  it("plots y values of +-1e308 with finite ticks and coordinates", function()
    local path = dir .. "/huge.svg"
    sw.plot.svg(path, { series = { { x = { 0, 1, 2 }, y = { -1e308, 0, 1e308 } } } })
    local s = slurp(path)
    assert.is_nil(s:find("nan", 1, true))
    assert.is_nil(s:find("inf", 1, true))
    assert.matches(">1e%+308<", s) -- the top tick's label
    assert.is_true(svg_parses(path))
    local ax = sw.plot.ticks(-1.7976931348623157e308, 1.7976931348623157e308)
    for _, v in ipairs(ax.ticks) do assert.is_true(v == v and math.abs(v) < math.huge) end
    assert.is.near(1, ax.map(1.7976931348623157e308), 1e-12)
  end)

  for _, axis in ipairs { "x", "y" } do
    it("widens an axis whose min equals its max (" .. axis .. ")", function()
      local spec = { series = series, [axis] = { min = 1, max = 1 } }
      local s = sw.plot.svg_string(spec)
      assert.is_nil(s:find("nan", 1, true))
      assert.is_nil(s:find("inf", 1, true))
    end)
  end

  it("widens a one-value range from the data and a flat log axis", function()
    local s = sw.plot.svg_string { series = { { x = { 2, 2 }, y = { 3, 3 } } },
      y = { log = true, min = 5, max = 5 } }
    assert.is_nil(s:find("nan", 1, true))
    assert.is_nil(s:find("inf", 1, true))
    local ax = sw.plot.ticks(7, 7, { min = 7, max = 7 })
    assert.is_true(ax.lo < 7 and ax.hi > 7)
    assert.are.equal(0.5, ax.map(7))
  end)

  it("refuses min above max, naming the axis", function()
    raises("segwise.plot.svg: spec.y.min (3) must not be above spec.y.max (1)",
      sw.plot.svg_string, { series = series, y = { min = 3, max = 1 } })
  end)
end)

describe("plot labels with invalid UTF-8 and XML's special characters", function()
  local bad = "a\xff\xfe<&>\"' \xc3( \xed\xa0\x80 \xef\xbf\xbe ok \u{00b5}A"
  local spec = { title = bad, x = { label = bad, unit = "\xe2\x82" }, y = { label = bad },
    series = { { x = { 0, 1 }, y = { 0, 1 }, label = bad } },
    marks = { { x = 0.5, y = 0.5, label = bad } }, marks_label = bad }

  it("write an SVG that is valid UTF-8 and parses as XML", function()
    local path = dir .. "/utf8.svg"
    local s = sw.plot.svg(path, spec)
    assert.is_not_nil(utf8.len(s))
    assert.is_true(svg_parses(path))
    assert.is_truthy(s:find("a\u{FFFD}\u{FFFD}&lt;&amp;&gt;&quot;&apos;", 1, true))
    assert.is_truthy(s:find("ok \u{00b5}A", 1, true)) -- valid text stays
  end)

  it("draw in the terminal", function()
    local t = sw.plot.term(spec, { width = 100, print = false })
    assert.is_not_nil(utf8.len(t))
  end)

  it("plot.escape replaces invalid bytes and escapes markup", function()
    assert.are.equal("x\u{FFFD}&lt;y&gt;", sw.plot.escape("x\x80<y>"))
    -- above U+10FFFF: one U+FFFD per byte, as no prefix of it is well formed (Unicode's
    -- "maximal subpart" practice, chapter 3; from memory)
    assert.are.equal(string.rep("\u{FFFD}", 4), sw.plot.escape("\xf4\x90\x80\x80"))
  end)
end)

describe("plot.term width", function()
  local spec = { series = { { x = { 0, 1, 2 }, y = { 0, 1, 4 } } } }
  local function cost(w)
    local t0 = os.clock()
    for _ = 1, 3 do sw.plot.term(spec, { width = w, print = false }) end
    return os.clock() - t0
  end

  -- a scaling check, not a timing target: 8 times the width must cost about 8 times
  -- as much (the quadratic trim it once had cost 64 times)
  it("costs time linear in the width", function()
    cost(500)
    local small, big = cost(2000), cost(16000)
    assert.is_true(big / math.max(small, 1e-3) < 24, ("%.3f s vs %.3f s"):format(small, big))
  end)

  it("rounds a fractional width and refuses a bad one", function()
    local a = sw.plot.term(spec, { width = 80.4, print = false })
    assert.are.equal(sw.plot.term(spec, { width = 80, print = false }), a)
    raises("segwise.plot.term: width must be a number of columns from 20 to 1000000",
      sw.plot.term, spec, { width = math.huge, print = false })
  end)
end)

describe("model file headers", function()
  local rows = "x,y_left,y_right,slope_right\n0,0,0,1\n1,1,1,1\n"
  it("refuses a negative segment count, echoing it as written", function()
    local err = raises('segments must be a positive whole number (found "-1")', sw.pwl.load,
      write("neg.csv", "# segments: -1\n" .. rows))
    assert.is_nil(err:find("18446744073709551615", 1, true))
  end)

  it("refuses a count too large for any file", function()
    raises('segments is too large (found "99999999999999999999")', sw.pwl.load,
      write("huge.csv", "# segments: 99999999999999999999\n" .. rows))
  end)
end)

describe("line ends and streams", function()
  it("a CR-only file (classic Mac) reads as rows", function()
    local lf = sw.curve.read(write("lf.csv", "x,y\n0,1\n1,2.5\n2,3\n"))
    local cr = sw.curve.read(write("cr.csv", "x,y\r0,1\r1,2.5\r2,3\r"))
    for _, x in ipairs { 0, 0.5, 1, 2 } do assert.are.equal(lf(x), cr(x)) end
    local a = sw.array.read(write("cr2.txt", "# comment\r1\r2\r3"), 1)
    assert.are.equal(3, #a)
  end)

  it("a CR-only model file loads, and keeps its header", function()
    local m, xu = sw.pwl.load(write("crm.csv",
      "# x unit: V\r# segments: 1\rx,y_left,y_right,slope_right\r0,0,0,2\r1,2,2,2\r"))
    assert.are.equal(1, m:nseg())
    assert.are.equal(2, m(1))
    assert.are.equal("V", xu)
  end)

  it("curve.read(\"/dev/zero\") stops at the first bytes: binary data", function()
    raises("binary data (byte 0x00): not a text file", sw.curve.read, "/dev/zero")
  end)

  it("reads a FIFO's text to its end", function()
    local fifo = dir .. "/feed"
    assert.is_true(os.execute("mkfifo '" .. fifo .. "'"))
    assert.is_true(os.execute("(printf 'x,y\\n0,0\\n1,1\\n' > '" .. fifo .. "') &"))
    local c = sw.curve.read(fifo)
    assert.are.equal(0.5, c(0.5))
  end)
end)
