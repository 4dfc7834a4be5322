-- sw.curve.read and the text reader under it (csrc/core/text/textread.c).
-- Expected numbers come from Lua's own tonumber/%.17g on the text the spec
-- writes, a parser independent of the reader under test.
local sw = require "segwise"

local files = require "helpers.files"
local dir, write = files.tmpdir()

-- Reads columns x, y of a file straight into two tables (via arrays).
local function columns(path, x, y, opts)
  local xs, ys = sw.core.read_columns(path, x, y, opts)
  return xs:totable(), ys:totable()
end

local raises = files.raises

describe("segwise.curve.read", function()
  teardown(function() os.execute("rm -rf '" .. dir .. "'") end)

  describe("layouts", function()
    it("reads a comma file with a header, by name, exactly", function()
      -- values printed with %.17g, expected through Lua's tonumber
      local vals = { 0.1, 1 / 3, -2.5e-7, 6.02214076e23, 0 }
      local rows = { "I_A,V_V" }
      for i, v in ipairs(vals) do rows[#rows + 1] = ("%.17g,%.17g"):format(v, i) end
      local path = write("basic.csv", table.concat(rows, "\n") .. "\n")
      local xs, ys = columns(path, "V_V", "I_A")
      assert.are.equal(#vals, #xs)
      for i, v in ipairs(vals) do
        assert.are.equal(i, xs[i])
        assert.are.equal(tonumber(("%.17g"):format(v)), ys[i])
      end
    end)

    it("chooses columns by 1-based number and defaults to 1 and 2", function()
      local path = write("three.csv", "a,b,c\n1,2,3\n4,5,6\n")
      local xs, ys = columns(path, 3, 1)
      assert.are.same({ 3, 6 }, xs)
      assert.are.same({ 1, 4 }, ys)
      xs, ys = columns(path)
      assert.are.same({ 1, 4 }, xs)
      assert.are.same({ 2, 5 }, ys)
    end)

    it("skips '#' comment lines and blank lines anywhere", function()
      local path = write("comments.csv",
        "# made by hand\n\n  # indented comment\nx,y\n1,10\n\n# middle\n2,20\n   \n")
      local xs, ys = columns(path, "x", "y")
      assert.are.same({ 1, 2 }, xs)
      assert.are.same({ 10, 20 }, ys)
    end)

    it("reads quoted fields with commas and doubled quotes", function()
      local path = write("quoted.csv", '"current, forward (A)","say ""V"""\n"1.5",2\n3,"4e-3"\n')
      local xs, ys = columns(path, "current, forward (A)", 'say "V"')
      assert.are.same({ 1.5, 3 }, xs)
      assert.are.same({ 2, 4e-3 }, ys)
    end)

    it("reads CRLF line ends", function()
      local path = write("crlf.csv", "x,y\r\n1,2\r\n3,4\r\n")
      local xs, ys = columns(path, "x", "y")
      assert.are.same({ 1, 3 }, xs)
      assert.are.same({ 2, 4 }, ys)
    end)

    it("reads semicolon files, with decimal commas too", function()
      local path = write("semi.csv", "x;y\n1,5;2\n3;4,25\n")
      local xs, ys = columns(path, "x", "y")
      assert.are.same({ 1.5, 3 }, xs)
      assert.are.same({ 2, 4.25 }, ys)
    end)

    it("reads tab-separated files", function()
      local path = write("tab.tsv", "x\ty\n1\t2\n3\t4\n")
      local xs, ys = columns(path, "x", "y")
      assert.are.same({ 1, 3 }, xs)
      assert.are.same({ 2, 4 }, ys)
    end)

    it("reads columns separated by runs of whitespace, with no header", function()
      local path = write("ws.dat", "  1   2\n3\t \t4   \n\n5 6")
      local xs, ys = columns(path, 1, 2)
      assert.are.same({ 1, 3, 5 }, xs)
      assert.are.same({ 2, 4, 6 }, ys)
    end)

    it("skips a UTF-8 byte order mark", function()
      local path = write("bom.csv", "\239\187\191x,y\n1,2\n")
      local xs = columns(path, "x", "y")
      assert.are.same({ 1 }, xs)
    end)

    it("honours delimiter and header options", function()
      local path = write("forced.csv", "1 2\n3 4\n")
      local xs = columns(path, 1, 2, { header = true, delimiter = " " })
      assert.are.same({ 3 }, xs) -- the first row was taken as names
      raises("no header row (the first row is numbers)", columns, path, "x", "y",
        { header = false })
    end)

    it("applies a scale factor per column", function()
      local path = write("scale.csv", "I_mA,V\n1,2\n3,4\n")
      local xs, ys = columns(path, "I_mA", "V", { scale = { x = 1e-3, y = -2 } })
      assert.are.same({ 1 * 1e-3, 3 * 1e-3 }, xs)
      assert.are.same({ -4, -8 }, ys)
    end)
  end)

  describe("number text", function()
    it("converts like Lua's own tonumber (the C library's strtod), bit for bit", function()
      -- hard cases for fast decimal conversion: halfway points, 16 to 20
      -- digit mantissas, the extremes of the double range, subnormals
      local texts = { "0.30000000000000004", "9007199254740993", "9007199254740992.5",
        "1e-27", "1e27", "1e23", "8.589973e9", "4.9406564584124654e-324", "2.2250738585072011e-308",
        "1.7976931348623157e308", "123456789012345678", "1234567890123456789",
        "12345678901234567890", "0.1", "-0", "+7", ".5", "5.", "1E5", "2.5e+3", "0001.2500",
        "7.0e-10", "3.4028236692093846e38" }
      math.randomseed(99)
      for _ = 1, 2000 do -- random doubles printed with 15, 16 and 17 digits
        local v = (math.random() - 0.5) * 10 ^ math.random(-30, 30)
        texts[#texts + 1] = ("%.15g"):format(v)
        texts[#texts + 1] = ("%.16g"):format(v)
        texts[#texts + 1] = ("%.17g"):format(v)
      end
      local rows = { "v" }
      for i, t in ipairs(texts) do rows[i + 1] = t end
      local a = sw.array.read(write("numbers.csv", table.concat(rows, "\n")), "v")
      assert.are.equal(#texts, #a)
      for i, t in ipairs(texts) do
        -- "e0" makes Lua read a float (through strtod) rather than an integer
        local ref = t:find("[eE]") and tonumber(t) or tonumber(t .. "e0")
        assert.are.equal(math.type(ref), "float")
        assert.are.equal(ref, a[i], t)
      end
    end)
  end)

  describe("building curves", function()
    it("sorts by x by default and evaluates between samples", function()
      local path = write("unsorted.csv", "v,i\n0.7,3\n0.5,1\n0.6,2\n")
      local c = sw.curve.read(path, { x = "v", y = "i" })
      local lo, hi = c:domain()
      assert.are.equal(0.5, lo)
      assert.are.equal(0.7, hi)
      -- linear between (0.5, 1) and (0.6, 2): midpoint 1.5 (exact within 1e-12)
      assert.is.near(1.5, c(0.55), 1e-12)
    end)

    it("with sort = false an unsorted file is an error naming both lines", function()
      local path = write("unsorted2.csv", "v,i\n0.7,3\n# note\n0.5,1\n")
      raises("unsorted2.csv:4: x = 0.5 comes after x = 0.69999999999999996 on line 2",
        sw.curve.read, path, { x = "v", y = "i", sort = false })
      local dup = write("unsorted3.csv", "v,i\n0.5,3\n0.5,1\n")
      raises("unsorted3.csv:3: x = 0.5 repeats line 2", sw.curve.read, dup,
        { x = "v", y = "i", sort = false })
    end)

    it("repeated x is an error naming both lines unless duplicates = 'mean'", function()
      local path = write("dup.csv", "x,y\n1,2\n2,6\n1,4\n")
      raises('dup.csv:4: x = 1 repeats line 2; pass duplicates = "mean"', sw.curve.read, path)
      local c = sw.curve.read(path, { duplicates = "mean" })
      assert.is.near(3, c(1), 1e-15) -- mean of 2 and 4
    end)

    it("applies scale from the options", function()
      local path = write("ma.csv", "I_mA,V_V\n1,0.6\n2,0.7\n")
      local c = sw.curve.read(path, { x = "I_mA", y = "V_V", scale = { x = 1e-3 } })
      local lo, hi = c:domain()
      assert.are.equal(1e-3, lo)
      assert.are.equal(2e-3, hi)
    end)
  end)

  describe("bad files name file:line:column and the text", function()
    local cases = {
      { "ragged, too few", "x,y\n1,2\n3\n",
        "ragged1.csv:3:2: row has 1 field but the header (line 1) has 2" },
      { "ragged, too many", "x,y\n1,2\n3,4,5\n", "ragged2.csv:3:5: row has 3 fields" },
      { "text in a number column", "x,y\n1,2\n3,4.5V\n",
        'text.csv:3:3: column 2 ("y"): expected a number, found "4.5V"' },
      { "text in the first column", "x,y\n1,2\nabc,4\n",
        'text1.csv:3:1: column 1 ("x"): expected a number, found "abc"' },
      { "empty field", "x,y\n1,\n", 'emptyfield.csv:2:3: column 2 ("y"): empty field' },
      { "NaN in the data", "x,y\n1,nan\n", '"nan" is not a finite number' },
      { "infinity in the data", "x,y\ninf,1\n", '"inf" is not a finite number' },
      { "empty file", "", "empty.csv:1:1: the file is empty" },
      { "only comments", "# nothing\n\n", "only comments and blank lines" },
      { "header only", "x,y\n", "no data rows after the header on line 1" },
      { "binary junk", "x,y\n1,2\n\0\1\2\255", "junk.csv:3:1: binary data (byte 0x00)" },
      { "control byte mid-row", "x,y\n1,\0272\n", "ctrl.csv:2:3: binary data (byte 0x1b)" },
      { "unterminated quote", 'x,y\n1,"2\n',
        "unterminated.csv:2:3: quoted field has no closing quote" },
      { "text after a quote", 'x,y\n1,"2"V\n',
        'afterquote.csv:2:6: text "V" after the closing quote' },
    }
    local names = { "ragged1.csv", "ragged2.csv", "text.csv", "text1.csv", "emptyfield.csv",
      "nan.csv", "inf.csv", "empty.csv", "comments_only.csv", "header_only.csv", "junk.csv",
      "ctrl.csv", "unterminated.csv", "afterquote.csv" }
    for i, case in ipairs(cases) do
      it(case[1], function()
        local path = write(names[i], case[2])
        local err = raises(case[3], sw.curve.read, path, { x = "x", y = "y" })
        assert.is_truthy(err:find("segwise.curve.read: ", 1, true), err)
      end)
    end

    it("an unknown column name lists the names there are", function()
      local path = write("names.csv", "I_A,V_V\n1,2\n")
      raises('names.csv:1: no column named "I" (columns: "I_A", "V_V")', sw.curve.read, path,
        { x = "I", y = "V_V" })
    end)

    it("a column number past the last column says how many there are", function()
      local path = write("narrow.csv", "a,b\n1,2\n")
      raises("narrow.csv:1: no column 3 (the header has 2 columns)", sw.curve.read, path,
        { x = 1, y = 3 })
    end)

    it("a name on a file without a header asks for numbers", function()
      local path = write("nohead.csv", "1,2\n3,4\n")
      raises("no header row", sw.curve.read, path, { x = "x", y = "y" })
    end)

    it("a missing path names the path", function()
      raises('cannot open "' .. dir .. '/no/such/file.csv"', sw.curve.read,
        dir .. "/no/such/file.csv")
    end)

    it("a directory names the path", function()
      raises('cannot read "' .. dir .. '"', sw.curve.read, dir)
    end)

    it("an unreadable file names the path (when not running as root)", function()
      local path = write("secret.csv", "x,y\n1,2\n2,3\n")
      os.execute("chmod 000 '" .. path .. "'")
      local f = io.open(path, "rb")
      if f then -- root reads anything: nothing to check here
        f:close()
      else
        raises('cannot open "' .. path .. '"', sw.curve.read, path)
      end
      os.execute("chmod 644 '" .. path .. "'")
    end)
  end)

  describe("bad arguments", function()
    local path
    setup(function() path = write("ok.csv", "x,y\n1,2\n2,3\n") end)
    local cases = {
      { "path not a string", function() return sw.curve.read(42) end, "path must be a string" },
      { "options not a table",
        function() return sw.curve.read(path, "x") end, "options must be a table" },
      { "unknown option",
        function() return sw.curve.read(path, { colum = 1 }) end, "unknown option 'colum'" },
      { "x a table",
        function() return sw.curve.read(path, { x = {} }) end,
        "option x must be a string or number" },
      { "x fractional",
        function() return sw.curve.read(path, { x = 1.5 }) end,
        "x must be a header name or a column number" },
      { "x zero",
        function() return sw.curve.read(path, { x = 0 }) end,
        "x column 0 must be a header name or a number from 1" },
      { "scale not a table",
        function() return sw.curve.read(path, { scale = 2 }) end, "option scale must be a table" },
      { "scale.x zero",
        function() return sw.curve.read(path, { scale = { x = 0 } }) end,
        "scale.x must be finite and non-zero" },
      { "scale.y NaN",
        function() return sw.curve.read(path, { scale = { y = 0 / 0 } }) end, "option y is NaN" },
      { "scale.y inf",
        function() return sw.curve.read(path, { scale = { y = math.huge } }) end,
        "scale.y must be finite and non-zero" },
      { "unknown scale key",
        function() return sw.curve.read(path, { scale = { z = 1 } }) end, "unknown option 'z'" },
      { "bad delimiter",
        function() return sw.curve.read(path, { delimiter = "|" }) end, "delimiter must be" },
      { "bad duplicates",
        function() return sw.curve.read(path, { duplicates = "max" }) end,
        "option duplicates must be one of" },
      { "one row only",
        function() return sw.curve.read(write("one.csv", "x,y\n1,2\n")) end, "one.csv: " },
    }
    for _, case in ipairs(cases) do
      it(case[1], function() raises(case[3], case[2]) end)
    end
  end)

  describe("a million rows", function()
    it("load correctly (x = i/1e6, y = sin of i, printed with %.17g)", function()
      local n = 1000000
      local path = dir .. "/million.csv"
      local f = assert(io.open(path, "wb"))
      f:write("# generated by read_spec\nV_V,I_A\n")
      local chunk = {}
      for i = 1, n do
        chunk[#chunk + 1] = ("%.17g,%.17g\n"):format(i / n, math.sin(i))
        if #chunk == 10000 then f:write(table.concat(chunk)); chunk = {} end
      end
      f:write(table.concat(chunk))
      f:close()
      local xs, ys = sw.core.read_columns(path, "V_V", "I_A")
      assert.are.equal(n, #xs)
      assert.are.equal(n, #ys)
      -- %.17g round-trips doubles exactly (IEEE 754: 17 significant digits suffice)
      local bad = 0
      for i = 1, n do
        if xs[i] ~= i / n or ys[i] ~= math.sin(i) then bad = bad + 1 end
      end
      assert.are.equal(0, bad)
      local c = sw.curve.read(path, { x = "V_V", y = "I_A" })
      local lo, hi = c:domain()
      assert.are.equal(1 / n, lo)
      assert.are.equal(1, hi)
      assert.are.equal(math.sin(n), c(1))
      os.remove(path)
    end)
  end)
end)
