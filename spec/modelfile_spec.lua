-- m:save / sw.pwl.load (csrc/core/pwl/pwl_io.c): the model file format, its exact
-- round trip, validation on load, and the write-then-rename rule.
local sw = require "segwise"

local files = require "helpers.files"
local dir, write = files.tmpdir()

local slurp, raises = files.read_all, files.raises

-- Bitwise-equal stored knots and values, segment by segment.
local function same_model(a, b)
  assert.are.equal(a:nseg(), b:nseg())
  for k = 1, a:nseg() do
    local s, t = a:seg(k), b:seg(k)
    assert.are.equal(s.lo, t.lo)
    assert.are.equal(s.hi, t.hi)
    assert.are.equal(s.y_lo, t.y_lo)
    assert.are.equal(s.y_hi, t.y_hi)
    assert.are.equal(s.slope, t.slope)
  end
end

-- A random continuous model: n knots with random gaps and values over many
-- decades, so that %.17g really matters.
local function random_points(n)
  local x, y, t = {}, {}, 0
  for i = 1, n do
    t = t + math.random() * 10 ^ math.random(-6, 3)
    x[i] = t
    y[i] = (math.random() - 0.5) * 10 ^ math.random(-9, 6)
  end
  return x, y
end

describe("segwise.pwl.load and model:save", function()
  teardown(function() os.execute("rm -rf '" .. dir .. "'") end)

  describe("round trip", function()
    it("gives back random continuous models bit for bit (seed 20261202)", function()
      math.randomseed(20261202)
      for trial = 1, 50 do
        local x, y = random_points(math.random(2, 40))
        local m = sw.pwl { x = x, y = y }
        local path = dir .. "/rt" .. trial .. ".csv"
        m:save(path)
        local m2 = sw.pwl.load(path)
        same_model(m, m2)
        for _ = 1, 20 do
          local v = x[1] + (x[#x] - x[1]) * (math.random() * 1.2 - 0.1)
          assert.are.equal(m(v), m2(v))
        end
      end
    end)

    it("gives back random discontinuous models bit for bit (seed 7)", function()
      math.randomseed(7)
      for trial = 1, 30 do
        local x = random_points(math.random(2, 20))
        local segs = {}
        for k = 1, #x - 1 do
          segs[k] = { lo = x[k], hi = x[k + 1], slope = (math.random() - 0.5) * 1e3,
                      intercept = (math.random() - 0.5) * 10 }
        end
        local m = sw.pwl.segments(segs)
        local path = dir .. "/disc" .. trial .. ".csv"
        m:save(path)
        same_model(m, sw.pwl.load(path))
      end
    end)

    it("keeps the extension rule and the units", function()
      local m = sw.pwl({ x = { 0, 1, 2 }, y = { 0, 1, 4 }, extend = "hold" })
      local path = dir .. "/hold.csv"
      m:save(path, { x_unit = "A", y_unit = "V" })
      local m2, xu, yu = sw.pwl.load(path)
      assert.are.equal("A", xu)
      assert.are.equal("V", yu)
      assert.are.equal(4, m2(10)) -- hold: the end value
      local e = sw.pwl({ x = { 0, 1 }, y = { 0, 1 }, extend = "error" })
      e:save(path)
      local e2, xu2 = sw.pwl.load(path)
      assert.are.equal("", xu2)
      assert.is_false(pcall(e2, 2)) -- error: refused outside the knots
      local l2 = sw.pwl.load(write("line.csv", slurp(path):gsub("extend: error", "extend: line")))
      assert.are.equal(2, l2(2)) -- line: the end segment continues (slope 1)
    end)
  end)

  describe("units", function()
    it("keep tabs and spaces inside; a stray CR in a file does not block a later save", function()
      local m = sw.pwl { x = { 0, 1 }, y = { 0, 1 } }
      local path = dir .. "/units.csv"
      m:save(path, { x_unit = "m A", y_unit = "k\tV" })
      local _, xu, yu = sw.pwl.load(path)
      assert.are.equal("m A", xu)
      assert.are.equal("k\tV", yu)
      local m2, xu2 = sw.pwl.load(write("cr.csv",
        "# x unit: a\rb\nx,y_left,y_right\n0,0,0\n1,1,1\n"))
      assert.are.equal("a b", xu2)
      m2:save(path, { x_unit = xu2 })
    end)

    -- fuzzer find: a CR right after "x unit:" loaded as a leading blank,
    -- which the next save and load dropped, so the units changed
    it("load what a save writes back when control bytes edge a unit", function()
      local _, xu = sw.pwl.load(write("edge.csv",
        "# x unit:\r(V\t)\t\tby\r\nx,y_left,y_right\n0,0,0\n1,1,1\n"))
      assert.are.equal("(V\t)\t\tby", xu)
      local m = sw.pwl { x = { 0, 1 }, y = { 0, 1 } }
      m:save(dir .. "/edge2.csv", { x_unit = xu })
      local _, again = sw.pwl.load(dir .. "/edge2.csv")
      assert.are.equal(xu, again)
    end)
  end)

  describe("file layout", function()
    it("is a commented CSV of x, y_left, y_right, slope_right", function()
      local m = sw.pwl.segments { { lo = 0, hi = 1, slope = 1, intercept = 0 },
                                  { lo = 1, hi = 2, slope = 0, intercept = 5 } }
      local path = dir .. "/layout.csv"
      m:save(path, { x_unit = "mA", y_unit = "V" })
      local text = slurp(path)
      assert.is_truthy(text:find("# segwise " .. sw.version, 1, true))
      assert.is_truthy(text:find("# x unit: mA\n", 1, true))
      assert.is_truthy(text:find("# y unit: V\n", 1, true))
      assert.is_truthy(text:find("# extend: line\n", 1, true))
      assert.is_truthy(text:find("# segments: 2\n", 1, true))
      local rows = {}
      for line in text:gmatch("[^\n]+") do
        if not line:find("^#") then rows[#rows + 1] = line end
      end
      -- the jump at x = 1: arriving 1 from the left, leaving at 5
      assert.are.same({ "x,y_left,y_right,slope_right", "0,0,0,1", "1,1,5,0", "2,5,5,0" }, rows)
    end)

    it("prints %.17g so 0.1 is written as its exact double", function()
      local m = sw.pwl { x = { 0, 0.1 }, y = { 1 / 3, 0.2 } }
      local path = dir .. "/digits.csv"
      m:save(path)
      assert.is_truthy(slurp(path):find(("0.10000000000000001,%.17g,%.17g"):format(0.2, 0.2),
        1, true))
    end)
  end)

  describe("load validates and names file:line", function()
    local head = "# segwise model\n# extend: line\nx,y_left,y_right\n"
    local cases = {
      { "x not increasing", head .. "0,0,0\n2,1,1\n1,2,2\n",
        "bad1.csv:6: x must increase (1 here after 2 on line 5)" },
      { "repeated x", head .. "0,0,0\n0,1,1\n", "bad2.csv:5: x must increase" },
      { "first knot values differ", head .. "0,0,1\n1,1,1\n",
        "bad3.csv:4: at the first knot y_left (0) must equal y_right (1)" },
      { "last knot values differ", head .. "0,0,0\n1,1,2\n",
        "bad4.csv:5: at the last knot y_left (1) must equal y_right (2)" },
      { "one knot", head .. "0,0,0\n", "bad5.csv:4: a model needs at least 2 knots (found 1)" },
      { "unknown extension rule", "# extend: wrap\nx,y_left,y_right\n0,0,0\n1,1,1\n",
        'bad6.csv:1: extend must be line, hold or error (found "wrap")' },
      { "segment count disagrees", "# segments: 3\nx,y_left,y_right\n0,0,0\n1,1,1\n",
        "bad7.csv:1: the header says 3 segments but the file has 2 knots" },
      { "missing column", "x,y\n0,0\n1,1\n",
        'bad8.csv:1: no column named "y_left" (columns: "x", "y")' },
      { "text in a number", head .. "0,0,0\n1,one,1\n",
        'bad9.csv:5:3: column 2 ("y_left"): expected a number, found "one"' },
      { "ragged row", head .. "0,0,0\n1,1\n", "bad10.csv:5:4: row has 2 fields" },
      { "empty file", "", "bad11.csv:1:1: the file is empty" },
      { "binary junk", "\0\0\0\0", "bad12.csv:1:1: binary data (byte 0x00)" },
      { "NaN value", head .. "0,0,0\n1,nan,nan\n", "is not a finite number" },
      { "slope that misses the next knot", "x,y_left,y_right,slope_right\n0,0,0,1\n1,1.5,1.5,1\n",
        "bad14.csv:2: slope_right 1 does not lead from y_right 0 to the next knot's y_left 1.5" },
    }
    for i, case in ipairs(cases) do
      it(case[1], function()
        local path = write("bad" .. i .. ".csv", case[2])
        local err = raises(case[3], sw.pwl.load, path)
        assert.is_truthy(err:find("segwise.pwl.load: ", 1, true), err)
      end)
    end

    it("a hand-written file without slopes loads (slopes from the knots)", function()
      local m = sw.pwl.load(write("hand.csv", "x,y_left,y_right\n0,0,0\n2,1,3\n4,3,3\n"))
      assert.are.equal(2, m:nseg())
      assert.are.equal(0.5, m:seg(1).slope) -- (1 - 0) / 2
      assert.are.equal(0, m:seg(2).slope)   -- (3 - 3) / 2
      assert.are.equal(3, m(2))             -- the right-hand segment's value at a jump
    end)

    it("a missing file names the path", function()
      raises('segwise.pwl.load: cannot open "' .. dir .. '/none.csv"', sw.pwl.load,
        dir .. "/none.csv")
    end)
    it("a path that is not a string is refused", function()
      raises("segwise.pwl.load: path must be a string", sw.pwl.load, {})
    end)
  end)

  describe("save", function()
    local m = sw.pwl { x = { 0, 1 }, y = { 0, 1 } }
    it("refuses bad arguments", function()
      raises("segwise.model:save: path must be a string (got nil)", m.save, m, nil)
      raises("segwise.model:save: unknown option 'unit'", m.save, m, dir .. "/u.csv",
        { unit = "A" })
      raises("x_unit must be a string", m.save, m, dir .. "/u.csv", { x_unit = 5 })
      raises("y unit contains a control character", m.save, m, dir .. "/u.csv",
        { y_unit = "V\nx,1,2" })
      raises("argument #1 must be a segwise model", m.save, {}, dir .. "/u.csv")
    end)

    it("refuses a freed model", function()
      local f = sw.pwl { x = { 0, 1 }, y = { 0, 1 } }
      f:free()
      raises("used after free()", f.save, f, dir .. "/freed.csv")
    end)

    describe("writes a temporary beside the target and renames it, so a failure leaves the old "
      .. "file", function()
      local good = sw.pwl { x = { 0, 1, 2 }, y = { 0, 1, 0 } }
      local other = sw.pwl { x = { 5, 6 }, y = { 7, 8 } }

      it("when an unrelated <path>.tmp exists, which stays as it was", function()
        local path = dir .. "/keep1.csv"
        good:save(path)
        assert(os.execute("mkdir -p '" .. path .. ".tmp'")) -- not the writer's temporary
        other:save(path)
        same_model(other, sw.pwl.load(path))
        assert.is_true(os.execute("test -d '" .. path .. ".tmp'"))
      end)

      it("when the target is a directory, which is refused and untouched", function()
        local path = dir .. "/adir"
        assert(os.execute("mkdir -p '" .. path .. "/inside'"))
        raises('cannot write "' .. path .. '": it is a directory', good.save, good, path)
        assert.is_not_nil(io.open(path .. "/inside", "rb")) -- the directory is untouched
      end)

      it("when the directory is not writable (skipped as root, who may write anyway)", function()
        local sub = dir .. "/ro"
        assert(os.execute("mkdir -p '" .. sub .. "'"))
        local path = sub .. "/model.csv"
        good:save(path)
        local before = slurp(path)
        os.execute("chmod 555 '" .. sub .. "'")
        local probe = io.open(sub .. "/probe", "wb")
        if probe then
          probe:close()
          os.remove(sub .. "/probe")
        else
          raises('cannot write "' .. path .. '"', other.save, other, path)
          assert.are.equal(before, slurp(path))
        end
        os.execute("chmod 755 '" .. sub .. "'")
      end)

      it("a successful save replaces the old file", function()
        local path = dir .. "/keep2.csv"
        good:save(path)
        other:save(path)
        same_model(other, sw.pwl.load(path))
        assert.is_nil(io.open(path .. ".tmp", "rb"))
      end)
    end)
  end)
end)
