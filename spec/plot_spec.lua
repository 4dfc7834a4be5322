-- Specs for segwise.plot: axis ticks, SVG output (well-formed XML, renders
-- with a real renderer, not blank, tick labels present) and terminal plots.
-- Only needs the Lua modules (no C module).  The PNG check decodes the
-- image with a small inflate written here (RFC 1950/1951, PNG filters from
-- the PNG specification, W3C 2003), so no image library is needed.

local plot = require "segwise.plot"
local axis = require "segwise.plot.axis"

local MU = "\u{00B5}"

local files = require "helpers.files"
local tmpname, read_all = files.tmpname, files.read_all

local function have(cmd)
  return os.execute("command -v " .. cmd .. " >/dev/null 2>&1") == true
end

----------------------------------------------------------------------------
-- XML well-formedness: one root, tags nest and match, attributes quoted
-- and unique, entities known, no stray '<' or '&'.
local function check_xml(s)
  local i, n, stack, roots = 1, #s, {}, 0
  local function fail(msg) error("XML: " .. msg .. " near byte " .. i, 0) end
  local function check_text(t)
    if t:find("<", 1, true) then fail("stray '<'") end
    for ent in t:gmatch("&([^;]*);?") do
      if not (ent == "amp" or ent == "lt" or ent == "gt" or ent == "quot" or ent == "apos"
          or ent:match("^#%d+$") or ent:match("^#x%x+$")) then fail("bad entity &" .. ent) end
    end
    if t:find("&[^;]*$") then fail("unterminated entity") end
  end
  if s:sub(1, 5) == "<?xml" then
    local e = s:find("?>", 1, true) or fail("unterminated declaration")
    i = e + 2
  end
  while i <= n do
    local lt = s:find("<", i, true)
    local text = s:sub(i, (lt or n + 1) - 1)
    if #stack == 0 and text:find("%S") then fail("text outside the root") end
    check_text(text)
    if not lt then break end
    i = lt
    if s:sub(i, i + 3) == "<!--" then
      local e = s:find("-->", i + 4, true) or fail("unterminated comment")
      i = e + 3
    elseif s:sub(i, i + 1) == "</" then
      local name, e = s:match("^</([%w_:%-%.]+)%s*>()", i)
      if not name then fail("bad end tag") end
      if stack[#stack] ~= name then
        fail("</" .. name .. "> closes <" .. tostring(stack[#stack]) .. ">")
      end
      stack[#stack] = nil
      i = e
    else
      local name, e = s:match("^<([%a_:][%w_:%-%.]*)()", i)
      if not name then fail("bad start tag") end
      if #stack == 0 then
        roots = roots + 1
        if roots > 1 then fail("second root element") end
      end
      i = e
      local seen = {}
      while true do
        local ws, e2 = s:match("^(%s*)()", i)
        i = e2
        if s:sub(i, i + 1) == "/>" then i = i + 2; break end
        if s:sub(i, i) == ">" then i = i + 1; stack[#stack + 1] = name; break end
        if ws == "" then fail("attributes must be separated by space") end
        local an, q, e3 = s:match("^([%a_:][%w_:%-%.]*)%s*=%s*([\"'])()", i)
        if not an then fail("bad attribute in <" .. name .. ">") end
        if seen[an] then fail("duplicate attribute " .. an) end
        seen[an] = true
        local close = s:find(q, e3, true) or fail("unterminated attribute value")
        check_text(s:sub(e3, close - 1))
        i = close + 1
      end
    end
  end
  if #stack > 0 then fail("unclosed <" .. stack[#stack] .. ">") end
  if roots ~= 1 then fail("no root element") end
  return true
end

----------------------------------------------------------------------------
-- Minimal inflate (RFC 1951) for zlib streams (RFC 1950), after Mark
-- Adler's puff: canonical Huffman codes decoded bit by bit.
local LBASE = { 3, 4, 5, 6, 7, 8, 9, 10, 11, 13, 15, 17, 19, 23, 27, 31, 35, 43, 51, 59, 67, 83,
  99, 115, 131, 163, 195, 227, 258 }
local LEXT = { 0, 0, 0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 2, 2, 2, 2, 3, 3, 3, 3, 4, 4, 4, 4, 5, 5,
  5, 5, 0 }
local DBASE = { 1, 2, 3, 4, 5, 7, 9, 13, 17, 25, 33, 49, 65, 97, 129, 193, 257, 385, 513, 769,
  1025, 1537, 2049, 3073, 4097, 6145, 8193, 12289, 16385, 24577 }
local DEXT = { 0, 0, 0, 0, 1, 1, 2, 2, 3, 3, 4, 4, 5, 5, 6, 6, 7, 7, 8, 8, 9, 9, 10, 10, 11, 11,
  12, 12, 13, 13 }
local CLORDER = { 16, 17, 18, 0, 8, 7, 9, 6, 10, 5, 11, 4, 12, 3, 13, 2, 14, 1, 15 }

local function inflate_zlib(data)
  local pos, buf, cnt = 3, 0, 0          -- skip the 2-byte zlib header
  local out, on = {}, 0
  local byte = string.byte
  local function bits(k)
    while cnt < k do
      local b = byte(data, pos)
      if not b then error("inflate: truncated data") end
      pos = pos + 1
      buf = buf | (b << cnt)
      cnt = cnt + 8
    end
    local v = buf & ((1 << k) - 1)
    buf = buf >> k
    cnt = cnt - k
    return v
  end
  local function build(lengths, nsym)
    local count, offs, sym = {}, {}, {}
    for l = 0, 15 do count[l] = 0 end
    for s = 0, nsym - 1 do local l = lengths[s] or 0; count[l] = count[l] + 1 end
    offs[1] = 0
    for l = 1, 14 do offs[l + 1] = offs[l] + count[l] end
    for s = 0, nsym - 1 do
      local l = lengths[s] or 0
      if l ~= 0 then sym[offs[l]] = s; offs[l] = offs[l] + 1 end
    end
    return { count = count, sym = sym }
  end
  local function decode(h)
    local code, first, index = 0, 0, 0
    local count, sym = h.count, h.sym
    for l = 1, 15 do
      code = code | bits(1)
      local c = count[l]
      if code - c < first then return sym[index + code - first] end
      index = index + c
      first = (first + c) << 1
      code = code << 1
    end
    error("inflate: bad Huffman code")
  end
  local fixed_l, fixed_d
  repeat
    local final = bits(1)
    local btype = bits(2)
    if btype == 0 then
      buf, cnt = 0, 0
      local len = byte(data, pos) | (byte(data, pos + 1) << 8)
      pos = pos + 4
      for k = 0, len - 1 do on = on + 1; out[on] = byte(data, pos + k) end
      pos = pos + len
    else
      local lcode, dcode
      if btype == 1 then
        if not fixed_l then
          local l = {}
          for s = 0, 143 do l[s] = 8 end
          for s = 144, 255 do l[s] = 9 end
          for s = 256, 279 do l[s] = 7 end
          for s = 280, 287 do l[s] = 8 end
          fixed_l = build(l, 288)
          local d = {}
          for s = 0, 29 do d[s] = 5 end
          fixed_d = build(d, 30)
        end
        lcode, dcode = fixed_l, fixed_d
      elseif btype == 2 then
        local nlen, ndist, ncode = bits(5) + 257, bits(5) + 1, bits(4) + 4
        local cl = {}
        for k = 1, ncode do cl[CLORDER[k]] = bits(3) end
        local clcode = build(cl, 19)
        local lens, k = {}, 0
        while k < nlen + ndist do
          local sym = decode(clcode)
          if sym < 16 then lens[k] = sym; k = k + 1
          else
            local rep, val = 0, 0
            if sym == 16 then val = lens[k - 1]; rep = 3 + bits(2)
            elseif sym == 17 then rep = 3 + bits(3)
            else rep = 11 + bits(7) end
            for _ = 1, rep do lens[k] = val; k = k + 1 end
          end
        end
        local ll, dl = {}, {}
        for s = 0, nlen - 1 do ll[s] = lens[s] end
        for s = 0, ndist - 1 do dl[s] = lens[nlen + s] end
        lcode, dcode = build(ll, nlen), build(dl, ndist)
      else
        error("inflate: bad block type")
      end
      while true do
        local sym = decode(lcode)
        if sym < 256 then on = on + 1; out[on] = sym
        elseif sym == 256 then break
        else
          sym = sym - 256
          local len = LBASE[sym] + bits(LEXT[sym])
          local ds = decode(dcode) + 1
          local dist = DBASE[ds] + bits(DEXT[ds])
          for _ = 1, len do on = on + 1; out[on] = out[on - dist] end
        end
      end
    end
  until final == 1
  return out
end

-- Decodes an 8-bit RGB or RGBA PNG; returns width, height and a function
-- pixel(x, y) -> r, g, b (0-based coordinates).
local function decode_png(png)
  assert(png:sub(1, 8) == "\137PNG\r\n\26\n", "not a PNG file")
  local pos, idat = 9, {}
  local w, h, depth, ctype, interlace
  while pos <= #png do
    local len = string.unpack(">I4", png, pos)
    local typ = png:sub(pos + 4, pos + 7)
    local body = png:sub(pos + 8, pos + 7 + len)
    if typ == "IHDR" then
      w, h, depth, ctype, _, _, interlace = string.unpack(">I4I4BBBBB", body)
    elseif typ == "IDAT" then idat[#idat + 1] = body
    elseif typ == "IEND" then break end
    pos = pos + 12 + len
  end
  assert(depth == 8 and (ctype == 6 or ctype == 2) and interlace == 0,
    "PNG type not handled by this check: depth " .. tostring(depth) .. ", colour type "
      .. tostring(ctype))
  local bpp = ctype == 6 and 4 or 3
  local raw = inflate_zlib(table.concat(idat))
  local stride = w * bpp
  local img = {}                         -- unfiltered bytes, 0-based index
  local prev = nil
  for y = 0, h - 1 do
    local base = y * (stride + 1) + 1
    local ft = raw[base]
    local row = {}
    for x = 0, stride - 1 do
      local v = raw[base + 1 + x]
      local a = x >= bpp and row[x - bpp] or 0
      local b = prev and prev[x] or 0
      local c = (prev and x >= bpp) and prev[x - bpp] or 0
      if ft == 1 then v = v + a
      elseif ft == 2 then v = v + b
      elseif ft == 3 then v = v + ((a + b) >> 1)
      elseif ft == 4 then
        local p = a + b - c
        local pa, pb, pc = math.abs(p - a), math.abs(p - b), math.abs(p - c)
        if pa <= pb and pa <= pc then v = v + a elseif pb <= pc then v = v + b else v = v + c end
      end
      row[x] = v & 255
    end
    img[y] = row
    prev = row
  end
  return w, h, function(x, y)
    local r = img[y]
    local o = x * bpp
    return r[o], r[o + 1], r[o + 2]
  end
end

----------------------------------------------------------------------------

local function diode_spec()
  -- Shockley law with invented parameters, for drawing only
  local xs, ys = {}, {}
  for i = 0, 80 do
    local v = 0.75 * i / 80
    xs[#xs + 1] = v
    ys[#ys + 1] = 1e-12 * (math.exp(v / 0.02585) - 1)
  end
  local kx = { 0.5, 0.6, 0.65, 0.7, 0.75 }
  local ky = {}
  for i, v in ipairs(kx) do ky[i] = 1e-12 * (math.exp(v / 0.02585) - 1) end
  return {
    title = "Diode & PWL <model> \"test\"",
    x = { label = "voltage", unit = "V" },
    y = { label = "current", unit = "A" },
    series = {
      { x = xs, y = ys, label = "exact" },
      { x = kx, y = ky, label = "PWL, 4 segments", marker = true },
      { x = { 0, 0.75 }, y = { 0.3, 0 }, label = "load line" },
      { x = { 0.1, 0.2, 0.3 }, y = { 0.05, 0.1, 0.15 }, label = "points", style = "points" },
      { x = { 0.1, 0.3, 0.5 }, y = { 0.2, 0.25, 0.2 }, label = "step", style = "step" },
    },
    marks = { { x = 0.7, y = 0.02, label = "Q <1>" } },
  }
end

describe("segwise.plot", function()

  describe("axis ticks", function()
    it("uses 1-2-5 steps and widens to whole ticks", function()
      local a = axis.new(0.03, 0.97, { n = 6 })
      assert.are.equal(0, a.lo)
      assert.is.near(1, a.hi, 1e-12)     -- tolerance: float sum of steps
      assert.are.equal(6, #a.ticks)      -- 0, 0.2, ..., 1
      for k = 2, #a.ticks do assert.is.near(0.2, a.ticks[k] - a.ticks[k - 1], 1e-12) end
    end)

    it("every step is 1, 2 or 5 times a power of ten, over many ranges", function()
      math.randomseed(7)
      for _ = 1, 500 do
        local lo = (math.random() - 0.5) * 10.0 ^ math.random(-12, 6)
        local hi = lo + math.random() * 10.0 ^ math.random(-12, 6) + 1e-300
        local a = axis.new(lo, hi, { n = math.random(3, 10) })
        assert.is_true(#a.ticks >= 2 and #a.ticks <= 25, #a.ticks)
        local step = a.step
        assert.is.near(step, a.ticks[2] - a.ticks[1], step * 1e-3 + math.abs(lo) * 1e-12)
        -- the axis covers the data (to rounding: 1e-6 of a step)
        assert.is_true(a.lo <= lo + step * 1e-6 and a.hi >= hi - step * 1e-6)
        local m = step / 10.0 ^ math.floor(math.log(step, 10) + 1e-9)
        local ok = math.abs(m - 1) < 1e-6 or math.abs(m - 2) < 1e-6 or math.abs(m - 5) < 1e-6
          or math.abs(m - 10) < 1e-6
        assert.is_true(ok, "step " .. step)
        -- labels are distinct, so no two ticks read the same
        local seen = {}
        for _, l in ipairs(a.labels) do
          assert.is_nil(seen[l], l)
          seen[l] = true
        end
      end
    end)

    it("labels ticks with one SI prefix per axis", function()
      local a = axis.new(0, 0.047, { unit = "A", n = 5 })
      assert.are.same({ "0 mA", "10 mA", "20 mA", "30 mA", "40 mA", "50 mA" }, a.labels)
      local b = axis.new(-3, 7, { unit = "V", n = 5 })
      assert.are.equal("-4 V", b.labels[1])
      assert.are.equal("0 V", b.labels[3])
      local c = axis.new(1.0001, 1.0009, { unit = "V", n = 5 })
      assert.are.equal("1.0002 V", c.labels[2])
    end)

    it("labels log axes by decades with their own prefix", function()
      local a = axis.new(2e-9, 3e-2, { log = true, unit = "A", n = 8 })
      assert.are.equal(1e-9, a.lo)
      assert.are.equal(0.1, a.hi)
      assert.are.equal("1 nA", a.labels[1])
      assert.are.equal("100 mA", a.labels[#a.labels])
      assert.is_truthy(table.concat(a.labels, " "):find("1 " .. MU .. "A", 1, true))
      local b = axis.new(1.5, 40, { log = true, n = 6 })   -- few decades: 1-2-5
      assert.are.same({ 1, 2, 5, 10, 20, 50, 100 }, b.ticks)
    end)

    it("handles a zero-width range and rejects bad ones", function()
      local a = axis.new(5, 5)
      assert.is_true(a.lo < 5 and a.hi > 5)
      assert.has_error(function() axis.new(0 / 0, 1) end)
      assert.has_error(function() axis.new(0, 1, { log = true }) end,
        "segwise.plot: log axis needs positive values (smallest is 0)")
    end)
  end)

  describe("svg", function()
    it("escapes XML special characters and drops forbidden controls", function()
      assert.are.equal("a &amp; b &lt;c&gt; &quot;d&quot; &apos;e&apos;",
        plot.escape("a & b <c> \"d\" 'e'"))
      assert.are.equal("ab", plot.escape("a\1b"))
    end)

    it("the tiny XML checker rejects what it should (so it can fail)", function()
      assert.has_error(function() check_xml("<a><b></a></b>") end)
      assert.has_error(function() check_xml("<a x=1/>") end)
      assert.has_error(function() check_xml("<a>&nope;</a>") end)
      assert.has_error(function() check_xml("<a/><b/>") end)
      assert.is_true(check_xml("<a x='1'><b/>t &amp; u</a>"))
    end)

    local path = tmpname() .. ".svg"
    local text

    it("writes a standalone, well-formed SVG file atomically", function()
      text = plot.svg(path, diode_spec())
      assert.are.equal(text, read_all(path))
      assert.is_nil(io.open(path .. ".tmp", "rb"))
      assert.is_true(check_xml(text))
      assert.is_truthy(text:find('xmlns="http://www.w3.org/2000/svg"', 1, true))
      assert.is_truthy(text:find("Diode &amp; PWL &lt;model&gt; &quot;test&quot;", 1, true))
      assert.is_truthy(text:find("Q &lt;1&gt;", 1, true))
    end)

    it("passes xmllint when it is installed", function()
      if not have("xmllint") then pending("xmllint not installed") return end
      assert.is_true(os.execute("xmllint --noout " .. path .. " 2>/dev/null") == true)
    end)

    it("has the tick labels as <text>, with SI prefixes", function()
      for _, l in ipairs { "0 mV", "200 mV", "600 mV", "0 A", "1 A" } do
        assert.is_truthy(text:find(">" .. l .. "</text>", 1, true), l)
      end
    end)

    it("uses the Okabe-Ito colours and dashes for the series", function()
      assert.is_truthy(text:find('stroke="#0072B2"', 1, true))
      assert.is_truthy(text:find('stroke="#D55E00"', 1, true))
      assert.is_truthy(text:find("stroke-dasharray", 1, true))
      -- the legend names every series
      for _, l in ipairs { "exact", "PWL, 4 segments", "load line", "points", "step" } do
        assert.is_truthy(text:find(">" .. l .. "</text>", 1, true), l)
      end
    end)

    it("renders with rsvg-convert to a PNG that is not blank", function()
      if not have("rsvg-convert") then
        pending("rsvg-convert (Debian librsvg2-bin) not installed")
        return
      end
      local png = path .. ".png"
      assert.is_true(os.execute("rsvg-convert -o " .. png .. " " .. path) == true)
      local w, h, pixel = decode_png(read_all(png))
      assert.are.equal(720, w)
      assert.are.equal(450, h)
      local colours, white, blue, vermillion = {}, 0, 0, 0
      local ncol = 0
      for y = 0, h - 1, 2 do
        for x = 0, w - 1, 2 do
          local r, g, b = pixel(x, y)
          local key = (r << 16) | (g << 8) | b
          if not colours[key] then colours[key] = true; ncol = ncol + 1 end
          if r == 255 and g == 255 and b == 255 then white = white + 1 end
          -- within 12 of the palette entries: lines really drawn in colour
          if math.abs(r - 0) < 12 and math.abs(g - 114) < 12 and math.abs(b - 178) < 12 then
            blue = blue + 1
          end
          if math.abs(r - 213) < 12 and math.abs(g - 94) < 12 and math.abs(b - 0) < 12 then
            vermillion = vermillion + 1
          end
        end
      end
      local total = (w // 2) * (h // 2)
      assert.is_true(ncol > 20, "distinct colours: " .. ncol)
      assert.is_true(white < total * 0.98, "almost all white")
      assert.is_true(white > total * 0.5, "mostly not white: background missing?")
      assert.is_true(blue > 20, "blue pixels: " .. blue)
      assert.is_true(vermillion > 10, "vermillion pixels: " .. vermillion)
      -- and an empty plot of the same size renders almost all white
      local empty = path .. ".empty.svg"
      plot.svg(empty, { series = {} })
      assert.is_true(os.execute("rsvg-convert -o " .. png .. " " .. empty) == true)
      local _, _, px2 = decode_png(read_all(png))
      local white2 = 0
      for y = 0, h - 1, 2 do
        for x = 0, w - 1, 2 do
          local r, g, b = px2(x, y)
          if r == 255 and g == 255 and b == 255 then white2 = white2 + 1 end
        end
      end
      assert.is_true(white2 > white, "empty plot should be whiter")
      os.remove(png)
      os.remove(empty)
    end)

    it("draws log axes, gaps at NaN and clips to fixed limits", function()
      local s = diode_spec()
      s.y.log = true
      s.series[1].y[10] = 0 / 0
      s.x.max = 0.6
      local t = plot.svg_string(s)
      assert.is_true(check_xml(t))
      assert.is_truthy(t:find(">1 nA</text>", 1, true))
      assert.is_truthy(t:find(">1 mA</text>", 1, true))
      assert.is_falsy(t:find(">800 mV</text>", 1, true))
      assert.is_truthy(t:find('clip-path="url(#sw-plot-area)"', 1, true))
      -- the NaN splits the first series' path into two runs
      local d = t:match('<path d="([^"]*)" stroke="#0072B2"')
      local moves = select(2, d:gsub("M", ""))
      assert.are.equal(2, moves)
    end)

    it("takes y as a function of x (a callable model)", function()
      local t = plot.svg_string {
        series = { { x = { 0, 1, 2 }, y = function(x) return x * x end } } }
      assert.is_true(check_xml(t))
      assert.is_truthy(t:find(">4</text>", 1, true))
    end)

    it("rejects bad specs, naming the series and element", function()
      assert.has_error(function() plot.svg_string { series = { { x = { 1, 2 }, y = { 1 } } } } end,
        "segwise.plot.svg: series 1: x has 2 values but y has 1")
      assert.has_error(function()
        plot.svg_string { series = { { x = { 1, "a" }, y = { 1, 2 }, label = "d" } } }
      end,
        "segwise.plot.svg: series 1 ('d') x[2] must be a number (got string)")
      assert.has_error(function()
        plot.svg_string { series = { { x = { 1 }, y = { 1 }, style = "bars" } } }
      end,
        "segwise.plot.svg: series 1: style must be 'line', 'points' or 'step' (got bars)")
      assert.has_error(function() plot.svg_string { series = 3 } end,
        "segwise.plot.svg: spec.series must be a list of series")
      assert.has_error(function() plot.svg_string { series = {}, marks = { { x = 1 } } } end,
        "segwise.plot.svg: marks[1] must be {x = number, y = number, label = text}")
      assert.has_error(function() plot.svg(nil, { series = {} }) end,
        "segwise.plot.svg: path must be a file name (got nil)")
      assert.has_error(function() plot.svg("/nonexistent-dir/x.svg", { series = {} }) end)
    end)

    os.remove(path)
  end)

  describe("term", function()
    local term = require "segwise.plot.term"
    local function lines_of(s)
      local t = {}
      for line in s:gmatch("([^\n]*)\n") do t[#t + 1] = line end
      return t
    end
    local function index_of(lines, text)
      for i, l in ipairs(lines) do if l:find(text, 1, true) then return i end end
    end

    it("draws braille at the requested width and returns the text", function()
      local s = plot.term(diode_spec(), { width = 72, height = 12, print = false })
      local maxw = 0
      for line in s:gmatch("[^\n]+") do maxw = math.max(maxw, utf8.len(line)) end
      assert.is_true(maxw <= 72, "widest line " .. maxw)
      local braille = 0
      for _, c in utf8.codes(s) do if c > 0x2800 and c <= 0x28FF then braille = braille + 1 end end
      assert.is_true(braille > 40, "braille cells: " .. braille)
      assert.is_truthy(s:find("200 mV", 1, true))
      assert.is_truthy(s:find("exact", 1, true))
      assert.is_truthy(s:find("load line", 1, true))
      assert.is_truthy(s:find(term.MARK, 1, true))          -- the mark
      assert.is_truthy(s:find("Q <1>", 1, true))
      assert.is_falsy(s:find("\27", 1, true))              -- no colour unless asked
    end)

    it("has a look of its own: title, key, y title, plot, x ticks, x title", function()
      local l = lines_of(plot.term(diode_spec(), { width = 72, height = 12, print = false }))
      assert.are.equal("Diode & PWL <model> \"test\"", l[1])   -- title first, flush left
      local key, ytitle = index_of(l, "exact"), index_of(l, "y: current")
      assert.is_true(key > 1 and key < ytitle, "the key sits between title and plot")
      assert.is_truthy(l[key]:find("PWL, 4 segments", 1, true))
      assert.are.equal(ytitle + 13, index_of(l, term.XTICK))      -- 12 rows, then the x ticks
      assert.is_truthy(l[#l]:find("x: voltage$"), "x title last, at the right: " .. l[#l])
      assert.are.equal(72, utf8.len(l[#l]))
      -- no frame lines and no arrows beside the axis titles
      local text = table.concat(l, "\n")
      for _, ch in ipairs { "\u{2502}", "\u{2524}", "\u{2514}", "\u{252C}", "\u{2500}", "\u{250C}",
                            "\u{2191}", "\u{2192}" } do
        assert.is_falsy(text:find(ch, 1, true), "found " .. ch)
      end
    end)

    it("ticks each y label and each x label, grid dots where they meet", function()
      local l = lines_of(plot.term({ series = { { x = { 0, 10 }, y = { 0, 0 } } } },
        { width = 40, height = 8, print = false }))
      local ticks = index_of(l, term.XTICK)
      assert.are.equal(9, ticks)                            -- no title, key or y title
      local labelled = 0
      for r = 1, 8 do
        local lab = l[r]:match("^%s*(%S+) " .. term.YTICK)
        if lab then
          labelled = labelled + 1
          assert.is_truthy(tonumber(lab), l[r])
        else
          assert.is_falsy(l[r]:find(term.YTICK, 1, true), l[r])
        end
      end
      assert.is_true(labelled >= 2, "labelled rows: " .. labelled)
      -- each x tick column holds a label character on the line below
      local nticks, cols = 0, {}
      local col = 0
      for _, c in utf8.codes(l[ticks]) do
        col = col + 1
        if utf8.char(c) == term.XTICK then nticks = nticks + 1; cols[#cols + 1] = col end
      end
      assert.is_true(nticks >= 2)
      for _, c in ipairs(cols) do
        local ch = utf8.char(utf8.codepoint(l[ticks + 1], utf8.offset(l[ticks + 1], c)))
        assert.is_truthy(ch:find("%S"), "no label under the tick at column " .. c)
      end
      -- a labelled row away from the data shows a grid dot in every tick column
      local top = l[1]
      assert.is_truthy(top:find(term.YTICK, 1, true))
      local dots = select(2, top:gsub(term.GRID, ""))
      assert.are.equal(nticks, dots)
    end)

    it("draws points with the SVG markers' shapes, in the same order", function()
      local s = plot.term({ series = {
        { x = { 0, 1 }, y = { 0, 1 }, style = "points", label = "first" },
        { x = { 0.5 }, y = { 0.5 }, style = "points", label = "second" } } },
        { width = 40, height = 6, print = false })
      assert.is_truthy(s:find("o first", 1, true))
      assert.is_truthy(s:find("s second", 1, true))
      local common = require "segwise.plot.common"
      assert.are.equal("circle", common.MARKERS[1])
      assert.are.equal("square", common.MARKERS[2])
    end)

    it("wraps a long key onto more lines within the width", function()
      local series = {}
      for k = 1, 6 do
        series[k] = { x = { 0, 1 }, y = { k, k + 1 }, label = "series number " .. k }
      end
      local l = lines_of(plot.term({ series = series }, { width = 50, height = 6, print = false }))
      assert.is_truthy(index_of(l, "series number 1") < index_of(l, "series number 6"))
      for _, line in ipairs(l) do assert.is_true(utf8.len(line) <= 50, line) end
    end)

    it("takes the width from COLUMNS-style options and defaults sensibly", function()
      local s = plot.term({ series = { { x = { 0, 1 }, y = { 0, 1 } } } },
        { width = 40, height = 6, print = false })
      for line in s:gmatch("[^\n]+") do assert.is_true(utf8.len(line) <= 40) end
      local term = require "segwise.plot.term"
      local c = term.columns()
      assert.is_true(c >= 20)
    end)

    it("a rising line climbs from bottom left to top right", function()
      local s = plot.term({ series = { { x = { 0, 1 }, y = { 0, 1 } } } },
        { width = 40, height = 8, print = false })
      local rows = {}
      for line in s:gmatch("[^\n]+") do
        if #rows < 8 then rows[#rows + 1] = line end       -- the 8 plot rows come first
      end
      local function first_braille(line)
        local col = 0
        for _, c in utf8.codes(line) do
          col = col + 1
          if c > 0x2800 and c <= 0x28FF then return col end
        end
      end
      local top, bottom = first_braille(rows[1]), first_braille(rows[#rows])
      assert.is_truthy(top and bottom)
      assert.is_true(top > bottom + 20, top .. " vs " .. bottom)
    end)

    it("colours series with ANSI codes on request", function()
      local s = plot.term(diode_spec(), { width = 60, height = 8, color = true, print = false })
      if os.getenv("NO_COLOR") then assert.is_falsy(s:find("\27", 1, true))
      else assert.is_truthy(s:find("\27[38;2;0;114;178m", 1, true)) end
    end)

    it("prints unless print = false", function()
      local written = {}
      local real = io.write
      io.write = function(...) for _, v in ipairs { ... } do written[#written + 1] = v end end
      local ok, s = pcall(plot.term, { series = { { x = { 0, 1 }, y = { 1, 0 } } } },
        { width = 40, height = 5 })
      io.write = real
      assert.is_true(ok, s)
      assert.are.equal(s, table.concat(written))
    end)

    it("rejects a terminal too narrow", function()
      assert.has_error(function()
        plot.term({ series = { { x = { 0, 1 }, y = { 0, 1 } } } }, { width = 12, print = false })
      end)
    end)
  end)
end)

describe("segwise.plot", function()
  -- Doubles with the methods the ready-made specs use.  The model is
  -- y = |x| on [-1, 2] (knots -1, 0, 2); the "curve" is y = x^2.
  local model = {
    knots = function() return { -1, 0, 2 }, { 1, 0, 2 }, { 1, 0, 2 } end,
    eval = function(_, x)
      if type(x) == "number" then return math.abs(x) end
      local t = {}
      for i = 1, #x do t[i] = math.abs(x[i]) end
      return t
    end,
  }
  local jumpy = {   -- a model with a jump at x = 0: left limit 0, right value 1
    knots = function() return { -1, 0, 1 }, { -1, 1, 2 }, { -1, 0, 2 } end,
    eval = function(_, x) return x < 0 and x or x + 1 end,
  }
  local curve = setmetatable({ domain = function() return -5, 5 end },
    { __call = function(_, x) return x * x end })

  describe("fit_spec", function()
    it("samples the curve over the first model's knots and draws models through their "
      .. "knots", function()
      local s = plot.fit_spec(curve, { { name = "abs", model = model } }, { n = 31 })
      assert.are.equal(2, #s.series)
      local c = s.series[1]
      assert.are.equal(31, #c.x)
      assert.are.equal(-1, c.x[1])
      assert.are.equal(2, c.x[31])
      assert.is.near(0.01, c.y[12], 1e-12)             -- x = -1 + 11 * 0.1 = 0.1, x^2 (by hand)
      assert.are.same({ -1, 0, 2 }, s.series[2].x)
      assert.are.same({ 1, 0, 2 }, s.series[2].y)
      assert.is_true(s.series[2].marker)
      assert.is_true(check_xml(plot.svg_string(s)))
    end)

    it("breaks the model line at a jump", function()
      local s = plot.fit_spec(nil, jumpy)
      local y = s.series[1].y
      local gaps = 0
      for i = 1, #y do if y[i] ~= y[i] then gaps = gaps + 1 end end
      assert.are.equal(1, gaps)
      assert.are.same({ -1, 0, 0, 0, 1 }, s.series[1].x)
    end)

    it("asks for a range when it cannot find one", function()
      assert.has_error(function() plot.fit_spec(function(x) return x end, nil) end,
        "segwise.plot.fit_spec: give the range as opts.lo and opts.hi (lo < hi)")
    end)
  end)

  describe("error_spec", function()
    it("plots model - curve and marks the knots on the zero line", function()
      local s = plot.error_spec(curve, model, { n = 31, x = { unit = "A" } })
      local e = s.series[1]
      -- at x = 0.5: |x| - x^2 = 0.25 (by hand)
      assert.is.near(0.5, e.x[16], 1e-12)
      assert.is.near(0.25, e.y[16], 1e-12)
      assert.are.equal(3, #s.marks)
      assert.are.equal(0, s.marks[2].y)
      assert.are.equal("knots (PWL model)", s.marks_label)
      local t = plot.svg_string(s)
      assert.is_true(check_xml(t))
      assert.is_truthy(t:find(">knots (PWL model)</text>", 1, true))
    end)

    it("gives relative error in percent on request", function()
      local s = plot.error_spec(curve, model, { n = 31, rel = true })
      -- at x = 0.5: (0.5 - 0.25) / 0.25 * 100 = 100 % (by hand)
      assert.is.near(100, s.series[1].y[16], 1e-9)
      assert.are.equal("%", s.y.unit)
    end)

    it("names what failed to evaluate", function()
      local broken = { knots = model.knots, eval = function() error("boom") end }
      local ok, err = pcall(plot.error_spec, curve, broken)
      assert.is_false(ok)
      assert.is_truthy(err:find("cannot evaluate models[1]", 1, true), err)
    end)
  end)

  describe("series_from_rows", function()
    it("makes one series per key", function()
      local rows = { { vb = 4.5, i = 0.010, p = 0.02 }, { vb = 5, i = 0.012, p = 0.03 } }
      local s = plot.series_from_rows(rows, "vb", { "i", "p" })
      assert.are.equal(2, #s)
      assert.are.same({ 4.5, 5 }, s[1].x)
      assert.are.same({ 0.02, 0.03 }, s[2].y)
      assert.are.equal("p", s[2].label)
      local nested = plot.series_from_rows({ { vb = 1, i = { DIODE = 0.5 } } }, "vb", "i.DIODE")
      assert.are.same({ 0.5 }, nested[1].y)
    end)
  end)

  describe("legend placement", function()
    it("moves the legend away from the data", function()
      -- data crowd the top left corner, so the legend goes elsewhere
      local xs, ys = {}, {}
      for i = 0, 50 do xs[#xs + 1] = i / 50; ys[#ys + 1] = (1 - i / 50) ^ 4 end
      local t = plot.svg_string { series = { { x = xs, y = ys, label = "falling" } } }
      local lx = tonumber(t:match('<g class="legend">\n<rect x="([%d.]+)"'))
      local left = tonumber(t:match('<rect class="frame" x="([%d.]+)"'))
      assert.is_true(lx > left + 100, "legend at x = " .. tostring(lx))
    end)
  end)

  describe("with the real C module", function()
    it("plots a real model and curve when segwise is built", function()
      local ok, sw = pcall(require, "segwise")
      if not ok or type(sw) ~= "table" or not sw.pwl or not sw.curve then
        pending("segwise C module not available in this build")
        return
      end
      local m = sw.pwl { x = { 0, 1, 2 }, y = { 0, 1, 4 } }
      local c = sw.curve.fn(function(x) return x * x end, { lo = 0, hi = 2 })
      local s = plot.error_spec(c, { { name = "chords", model = m } }, { n = 21 })
      -- chord of x^2 on [0, 1]: x - x^2, 0.25 at x = 0.5 (by hand)
      assert.is.near(0.25, s.series[1].y[6], 1e-12)
      assert.is_true(check_xml(plot.svg_string(plot.fit_spec(c, m))))
    end)
  end)
end)
