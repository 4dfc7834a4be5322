--- segwise.plot.term: the same plots in a terminal, drawn with Unicode
-- braille characters (2 x 4 dots per cell).  Lines keep their dash
-- pattern as a cue without colour; ANSI colours (Okabe-Ito) on request.
--
-- Layout: title, then the key (one sample per series), then "y: label"
-- over a plot without frame lines: short ticks beside the y labels and
-- under the x labels, a dot where a tick row meets a tick column, and
-- "x: label" under the x labels at the right.
-- @module segwise.plot.term

local numtext = require "segwise.report.num" -- numbers with a '.' in any locale
local common = require "segwise.plot.common"

local M = {}
local fmt, concat = numtext.format, table.concat
local floor, max, min, abs = math.floor, math.max, math.min, math.abs

-- Braille dot bits by (column 0..1, row 0..3) within a cell (Unicode
-- braille patterns block, U+2800..U+28FF: dots 1-8).
local BIT = { [0] = { [0] = 0x01, 0x02, 0x04, 0x40 }, [1] = { [0] = 0x08, 0x10, 0x20, 0x80 } }

local MARK = "\u{25C9}"       -- fisheye: knots, operating points
local GRID = "\u{00B7}"       -- middle dot: a tick row meets a tick column
local YTICK = "\u{2576}"      -- light right: a y tick pointing into the plot
local XTICK = "\u{2575}"      -- light up: an x tick under the plot
-- Point characters follow the SVG markers' shapes, in the same order
-- (circle, square, triangle, diamond, cross, plus, triangle down, star).
local POINT_CHARS = { "o", "s", "^", "d", "x", "+", "v", "*" }
M.MARK, M.GRID, M.YTICK, M.XTICK, M.POINT_CHARS = MARK, GRID, YTICK, XTICK, POINT_CHARS

--- Terminal width: opts.width, else $COLUMNS, else `tput cols`, else 80.
function M.columns(opts)
  if opts and opts.width ~= nil then
    local w = opts.width
    if type(w) ~= "number" or not (w >= 20 and w <= 1e6) then
      error(fmt("segwise.plot.term: width must be a number of columns from 20 to 1000000 "
        .. "(got %s)", numtext.str(w)), 5)
    end
    return floor(w + 0.5)
  end
  local c = tonumber(os.getenv("COLUMNS") or "")
  if c and c >= 20 then return floor(c) end
  local ok, pipe = pcall(io.popen, "tput cols 2>/dev/null")
  if ok and pipe then
    local s = pipe:read("*l")
    pipe:close()
    c = tonumber(s or "")
    if c and c >= 20 then return floor(c) end
  end
  return 80
end

local function ulen(s) return utf8.len(s) or #s end

-- s without trailing blanks.  Not gsub("%s+$"): that pattern retries from
-- every blank of a long run and made wide plots quadratic in the width.
local function rtrim(s)
  local i = #s
  while i > 0 and s:byte(i) == 32 do i = i - 1 end
  return s:sub(1, i)
end

-- Splits a string into a list of UTF-8 characters.
local function chars(s)
  local t = {}
  for _, c in utf8.codes(s) do t[#t + 1] = utf8.char(c) end
  return t
end

-- Dash pattern in dots: on/off lengths, scaled from the SVG pattern.
local function dot_pattern(dash)
  if #dash == 0 then return nil end
  local p, total = {}, 0
  for i, v in ipairs(dash) do p[i] = max(1, floor(v / 2 + 0.5)); total = total + p[i] end
  return p, total
end

local function pattern_on(p, total, step)
  if not p then return true end
  local k = step % total
  for i, v in ipairs(p) do
    if k < v then return i % 2 == 1 end
    k = k - v
  end
  return true
end

-- A braille canvas of w x rows cells: per cell the dot bits and the series
-- that drew there last; `over` holds characters placed on top (points,
-- marks, mark labels).
local function new_canvas(w, rows)
  local cv = { w = w, rows = rows, pxw = w * 2, pxh = rows * 4, bits = {}, owner = {}, over = {} }
  for r = 1, rows do cv.bits[r], cv.owner[r], cv.over[r] = {}, {}, {} end
  return cv
end

local function dot(cv, x, y, sidx)
  if x < 0 or y < 0 or x >= cv.pxw or y >= cv.pxh then return end
  local r, c = y // 4 + 1, x // 2 + 1
  cv.bits[r][c] = (cv.bits[r][c] or 0) | BIT[x % 2][y % 4]
  cv.owner[r][c] = sidx
end

local function to_px(cv, fx, fy) return fx * (cv.pxw - 1), (1 - fy) * (cv.pxh - 1) end

-- The cell holding plot fractions (fx, fy), or nil outside the plot.
local function cell_of(cv, fx, fy)
  if not (fx and fy and fx >= 0 and fx <= 1 and fy >= 0 and fy <= 1) then return nil end
  local x, y = to_px(cv, fx, fy)
  return min(cv.rows, floor((y + 0.5) / 4) + 1), min(cv.w, floor((x + 0.5) / 2) + 1)
end

-- One series as a braille line: a DDA step per dot, dashes by step count.
local function draw_line(cv, s, xa, ya)
  local pat, total = dot_pattern(s.dash)
  local step = 0
  for _, run in ipairs(common.runs(s, xa, ya)) do
    if #run == 2 then
      local x, y = to_px(cv, run[1], run[2])
      dot(cv, floor(x + 0.5), floor(y + 0.5), s.index)
    end
    for k = 1, #run - 2, 2 do
      local x0, y0 = to_px(cv, run[k], run[k + 1])
      local x1, y1 = to_px(cv, run[k + 2], run[k + 3])
      local cx0, cy0, cx1, cy1 = common.clip(x0, y0, x1, y1, cv.pxw - 1, cv.pxh - 1)
      if cx0 then
        local n = max(1, floor(max(abs(cx1 - cx0), abs(cy1 - cy0)) + 0.5))
        for i = 0, n do
          local t = i / n
          if pattern_on(pat, total, step) then
            dot(cv, floor(cx0 + t * (cx1 - cx0) + 0.5), floor(cy0 + t * (cy1 - cy0) + 0.5), s.index)
          end
          step = step + 1
        end
      end
    end
  end
end

local function point_char(s) return POINT_CHARS[(s.index - 1) % #POINT_CHARS + 1] end

local function draw_points(cv, s, xa, ya)
  local ch = point_char(s)
  for k = 1, #s.x do
    local r, c = cell_of(cv, xa.map(s.x[k]), ya.map(s.y[k]))
    if r then cv.over[r][c] = { ch = ch, sidx = s.index } end
  end
end

-- A mark's label goes right of it on blank cells, else left, else nowhere.
local function place_label(cv, r, c, label)
  local lab = chars(" " .. label)
  local function blank(c0)
    for j = 0, #lab - 1 do
      local cc = c0 + j
      if cc < 1 or cc > cv.w or cv.over[r][cc] then return false end
    end
    return true
  end
  local c0 = c + 1
  if not blank(c0) then c0 = c - #lab end
  if blank(c0) then
    for j = 1, #lab do cv.over[r][c0 + j - 1] = { ch = lab[j], text = true } end
  end
end

local function draw_marks(cv, marks, xa, ya)
  for _, m in ipairs(marks) do
    local r, c = cell_of(cv, xa.map(m.x), ya.map(m.y))
    if r then
      cv.over[r][c] = { ch = MARK }
      if m.label then place_label(cv, r, c, m.label) end
    end
  end
end

-- Rows that carry a y tick, with their labels: {[row] = label}.
local function tick_rows(cv, ya)
  local at = {}
  for i, v in ipairs(ya.ticks) do
    local f = ya.map(v)
    if f and f >= -1e-9 and f <= 1 + 1e-9 then
      local r = min(cv.rows, max(1, floor(((1 - f) * (cv.pxh - 1) + 0.5) / 4) + 1))
      if not at[r] then at[r] = ya.labels[i] end
    end
  end
  return at
end

-- Columns that carry an x tick: {{c = column, label = text}, ...}.
local function tick_cols(cv, xa)
  local list = {}
  for i, v in ipairs(xa.ticks) do
    local f = xa.map(v)
    if f and f >= -1e-9 and f <= 1 + 1e-9 then
      local c = min(cv.w, floor(f * (cv.pxw - 1) / 2 + 0.5) + 1)
      list[#list + 1] = { c = c, label = xa.labels[i] }
    end
  end
  return list
end

-- The plot rows: y label and tick in the gutter, then the cells; a grid dot
-- on an empty cell where a tick row meets a tick column.
local function plot_rows(cv, lw, yat, xcols, paint)
  local is_col = {}
  for _, t in ipairs(xcols) do is_col[t.c] = true end
  local out = {}
  for r = 1, cv.rows do
    local lab = yat[r]
    local line = { string.rep(" ", lw - (lab and ulen(lab) or 0)) .. (lab or "") .. " ",
      lab and YTICK or " " }
    for c = 1, cv.w do
      local o, b = cv.over[r][c], cv.bits[r][c]
      if o then line[#line + 1] = o.text and o.ch or paint(o.ch, o.sidx)
      elseif b then line[#line + 1] = paint(utf8.char(0x2800 + b), cv.owner[r][c])
      elseif lab and is_col[c] then line[#line + 1] = GRID
      else line[#line + 1] = " " end
    end
    out[#out + 1] = rtrim(concat(line))
  end
  return out
end

-- Under the plot: the x ticks, then their labels centred on them where they
-- do not collide (the ends shifted inside the plot's width).
local function x_axis_lines(cv, lw, xcols)
  local left = lw + 2
  local ticks = {}
  for c = 1, cv.w do ticks[c] = " " end
  for _, t in ipairs(xcols) do ticks[t.c] = XTICK end
  local cells, last = {}, 0
  local total = left + cv.w
  for _, t in ipairs(xcols) do
    local s = chars(t.label)
    local start = max(1, left + t.c - #s // 2)
    if start + #s - 1 > total then start = total - #s + 1 end
    if last == 0 or start > last + 1 then
      for j = 1, #s do cells[start + j - 1] = s[j] end
      last = start + #s - 1
    end
  end
  local labels = {}
  for c = 1, last do labels[c] = cells[c] or " " end
  return { rtrim(string.rep(" ", left) .. concat(ticks)), concat(labels) }
end

-- A sample of a line series: three braille cells with its dash pattern.
local function line_sample(s)
  local pat, tot = dot_pattern(s.dash)
  local b = {}
  for c = 0, 2 do
    local v = 0
    for dx = 0, 1 do
      if pattern_on(pat, tot, c * 2 + dx) then v = v | BIT[dx][2] end
    end
    b[#b + 1] = utf8.char(0x2800 + v)
  end
  return concat(b)
end

-- The key above the plot: "sample label" entries, packed into lines of at
-- most `cols` columns, indented to the plot's left edge.
local function key_lines(p, lw, cols, paint)
  local entries = {}
  for _, s in ipairs(p.series) do
    if s.label then
      local sample = s.style == "points" and point_char(s) or line_sample(s)
      entries[#entries + 1] = { text = paint(sample, s.index) .. " " .. s.label,
        len = ulen(sample) + 1 + ulen(s.label) }
    end
  end
  if #p.marks > 0 and p.marks_label then
    entries[#entries + 1] = { text = MARK .. " " .. p.marks_label, len = 2 + ulen(p.marks_label) }
  end
  local out, line, used = {}, nil, 0
  local indent = string.rep(" ", lw + 2)
  for _, e in ipairs(entries) do
    if line and used + 3 + e.len > cols then out[#out + 1] = line; line = nil end
    if line then line, used = line .. "   " .. e.text, used + 3 + e.len
    else line, used = indent .. e.text, lw + 2 + e.len end
  end
  if line then out[#out + 1] = line end
  return out
end

-- Options checked, the axes built, the plot area's width found.
local function layout(spec, opts, F)
  if type(opts) ~= "table" then error(F .. ": opts must be a table", 4) end
  local p = common.normalise(spec, F)
  local cols = M.columns(opts)
  local rows = opts.height or spec.rows or 16
  if type(rows) ~= "number" or not (rows >= 4 and rows <= 1e5) then
    error(F .. ": height must be a number of rows from 4 to 100000", 4)
  end
  rows = floor(rows + 0.5)
  -- y labels decide the left margin; the x axis gets fewer ticks when narrow
  local xa, ya = common.axes(p, F, { nx = max(2, floor(cols / 16)), ny = max(2, floor(rows / 4)) })
  local lw = 0
  for _, l in ipairs(ya.labels) do lw = max(lw, ulen(l)) end
  local w = cols - lw - 2
  if w < 10 then error(F .. ": terminal too narrow for a plot (" .. cols .. " columns)", 4) end
  return p, xa, ya, { cols = cols, rows = rows, lw = lw, w = w }
end

--- Builds the terminal plot as a string.
-- @tparam table spec as for segwise.plot.svg (width/height in characters via opts)
-- @tparam[opt] table opts {width = columns, height = rows of the plot area (16),
--   color = false, print = true}
-- @treturn string
function M.render(spec, opts)
  local F = "segwise.plot.term"
  opts = opts or {}
  local p, xa, ya, L = layout(spec, opts, F)
  local color = opts.color and os.getenv("NO_COLOR") == nil
  local function paint(s, sidx)
    if not color or not sidx then return s end
    local rgb = p.series[sidx].rgb
    return fmt("\27[38;2;%d;%d;%dm%s\27[0m", rgb[1], rgb[2], rgb[3], s)
  end

  local cv = new_canvas(L.w, L.rows)
  for _, s in ipairs(p.series) do
    if s.style ~= "points" then draw_line(cv, s, xa, ya) end
    if s.style == "points" or s.marker then draw_points(cv, s, xa, ya) end
  end
  draw_marks(cv, p.marks, xa, ya)

  local out = {}
  local function add(list) for _, l in ipairs(list) do out[#out + 1] = l end end
  if p.title then out[#out + 1] = p.title end
  add(key_lines(p, L.lw, L.cols, paint))
  if p.y.label ~= "" then out[#out + 1] = "y: " .. p.y.label end
  local xcols = tick_cols(cv, xa)
  add(plot_rows(cv, L.lw, tick_rows(cv, ya), xcols, paint))
  add(x_axis_lines(cv, L.lw, xcols))
  if p.x.label ~= "" then
    local t = "x: " .. p.x.label
    out[#out + 1] = string.rep(" ", max(0, L.lw + 2 + L.w - ulen(t))) .. t
  end
  return concat(out, "\n") .. "\n"
end

--- Draws the plot in the terminal; returns the text and prints it unless
-- opts.print (or spec.print) is false.
function M.draw(spec, opts)
  opts = opts or {}
  local s = M.render(spec, opts)
  local quiet = opts.print == false or (type(spec) == "table" and spec.print == false)
  if not quiet then io.write(s) end
  return s
end

return M
