--- segwise.plot.term: the same plots in a terminal, drawn with Unicode
-- braille characters (2 x 4 dots per cell).  Lines keep their dash
-- pattern as a cue without colour; ANSI colours (Okabe-Ito) on request.
-- @module segwise.plot.term

local common = require "segwise.plot.common"

local M = {}
local fmt, concat = string.format, table.concat
local floor, max, min, abs = math.floor, math.max, math.min, math.abs

-- Braille dot bits by (column 0..1, row 0..3) within a cell (Unicode
-- braille patterns block, U+2800..U+28FF: dots 1-8).
local BIT = { [0] = { [0] = 0x01, 0x02, 0x04, 0x40 }, [1] = { [0] = 0x08, 0x10, 0x20, 0x80 } }

local MARK = "\u{25C6}"                     -- black diamond: knots, operating points
local POINT_CHARS = { "o", "x", "+", "*", "#", "@", "%", "&" }

--- Terminal width: opts.width, else $COLUMNS, else `tput cols`, else 80.
function M.columns(opts)
  if opts and opts.width then return opts.width end
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

--- Builds the terminal plot as a string.
-- @tparam table spec as for segwise.plot.svg (width/height in characters via opts)
-- @tparam[opt] table opts {width = columns, height = rows of the plot area (16),
--   color = false, print = true}
-- @treturn string
function M.render(spec, opts)
  local F = "segwise.plot.term"
  opts = opts or {}
  if type(opts) ~= "table" then error(F .. ": opts must be a table", 3) end
  local p = common.normalise(spec, F)
  local cols = M.columns(opts)
  local rows = opts.height or spec.rows or 16
  if type(rows) ~= "number" or rows < 4 then error(F .. ": height must be at least 4 rows", 3) end
  rows = floor(rows)
  local color = opts.color and os.getenv("NO_COLOR") == nil

  -- y labels decide the left margin; the x axis gets fewer ticks when narrow
  local xa, ya = common.axes(p, F, { nx = max(2, floor(cols / 16)), ny = max(2, floor(rows / 4)) })
  local lw = 0
  for _, l in ipairs(ya.labels) do lw = max(lw, ulen(l)) end
  local w = cols - lw - 2
  if w < 10 then error(F .. ": terminal too narrow for a plot (" .. cols .. " columns)", 3) end
  local pxw, pxh = w * 2, rows * 4

  -- canvas: per cell, braille bits and the series that drew there last
  local bits, owner, over = {}, {}, {}
  for r = 1, rows do bits[r], owner[r], over[r] = {}, {}, {} end
  local function dot(x, y, sidx)
    if x < 0 or y < 0 or x >= pxw or y >= pxh then return end
    local cx, cy = x // 2, y // 4
    local r, c = cy + 1, cx + 1
    bits[r][c] = (bits[r][c] or 0) | BIT[x % 2][y % 4]
    owner[r][c] = sidx
  end
  local function to_px(fx, fy) return fx * (pxw - 1), (1 - fy) * (pxh - 1) end

  for _, s in ipairs(p.series) do
    local pat, total = dot_pattern(s.dash)
    if s.style ~= "points" then
      local step = 0
      for _, run in ipairs(common.runs(s, xa, ya)) do
        if #run == 2 then
          local x, y = to_px(run[1], run[2])
          dot(floor(x + 0.5), floor(y + 0.5), s.index)
        end
        for k = 1, #run - 2, 2 do
          local x0, y0 = to_px(run[k], run[k + 1])
          local x1, y1 = to_px(run[k + 2], run[k + 3])
          local cx0, cy0, cx1, cy1 = common.clip(x0, y0, x1, y1, pxw - 1, pxh - 1)
          if cx0 then
            -- DDA along the longer side: one dot per step, dashes by step count
            local n = max(1, floor(max(abs(cx1 - cx0), abs(cy1 - cy0)) + 0.5))
            for i = 0, n do
              local t = i / n
              if pattern_on(pat, total, step) then
                dot(floor(cx0 + t * (cx1 - cx0) + 0.5), floor(cy0 + t * (cy1 - cy0) + 0.5), s.index)
              end
              step = step + 1
            end
          end
        end
      end
    end
    if s.style == "points" or s.marker then
      local ch = POINT_CHARS[(s.index - 1) % #POINT_CHARS + 1]
      for k = 1, #s.x do
        local fx, fy = xa.map(s.x[k]), ya.map(s.y[k])
        if fx and fy and fx >= 0 and fx <= 1 and fy >= 0 and fy <= 1 then
          local x, y = to_px(fx, fy)
          local r, c = floor((y + 0.5) / 4) + 1, floor((x + 0.5) / 2) + 1
          over[r][c] = { ch = ch, sidx = s.index }
        end
      end
    end
  end
  for _, m in ipairs(p.marks) do
    local fx, fy = xa.map(m.x), ya.map(m.y)
    if fx and fy and fx >= 0 and fx <= 1 and fy >= 0 and fy <= 1 then
      local x, y = to_px(fx, fy)
      local r, c = min(rows, floor((y + 0.5) / 4) + 1), min(w, floor((x + 0.5) / 2) + 1)
      over[r][c] = { ch = MARK }
      if m.label then
        -- label to the right when it fits on blank cells, else to the left
        local lab = chars(" " .. m.label)
        local function blank(c0)
          for j = 0, #lab - 1 do
            local cc = c0 + j
            if cc < 1 or cc > w or over[r][cc] then return false end
          end
          return true
        end
        local c0 = c + 1
        if not blank(c0) then c0 = c - #lab end
        if blank(c0) then
          for j = 1, #lab do over[r][c0 + j - 1] = { ch = lab[j], text = true } end
        end
      end
    end
  end

  local function paint(s, sidx)
    if not color or not sidx then return s end
    local rgb = p.series[sidx].rgb
    return fmt("\27[38;2;%d;%d;%dm%s\27[0m", rgb[1], rgb[2], rgb[3], s)
  end

  -- tick rows for the y axis
  local ytick_at = {}
  for i, v in ipairs(ya.ticks) do
    local f = ya.map(v)
    if f and f >= -1e-9 and f <= 1 + 1e-9 then
      local r = min(rows, max(1, floor(((1 - f) * (pxh - 1) + 0.5) / 4) + 1))
      if not ytick_at[r] then ytick_at[r] = ya.labels[i] end
    end
  end

  local out = {}
  if p.title then
    local t = p.title
    out[#out + 1] = string.rep(" ", max(0, lw + 2 + (w - ulen(t)) // 2)) .. t
  end
  if p.y.label ~= "" then out[#out + 1] = string.rep(" ", lw + 1) .. "\u{2191} " .. p.y.label end
  for r = 1, rows do
    local line = {}
    local lab = ytick_at[r]
    line[1] = string.rep(" ", lw - (lab and ulen(lab) or 0)) .. (lab or "")
    line[2] = lab and "\u{2524}" or "\u{2502}"
    for c = 1, w do
      local o = over[r][c]
      if o then
        line[#line + 1] = o.text and o.ch or paint(o.ch, o.sidx)
      elseif bits[r][c] then
        line[#line + 1] = paint(utf8.char(0x2800 + bits[r][c]), owner[r][c])
      else
        line[#line + 1] = " "
      end
    end
    out[#out + 1] = (concat(line):gsub("%s+$", ""))
  end

  -- x axis line with tick marks, then labels placed where they do not collide
  local axis_line = { string.rep(" ", lw), "\u{2514}" }
  local tick_col = {}
  for i, v in ipairs(xa.ticks) do
    local f = xa.map(v)
    if f and f >= -1e-9 and f <= 1 + 1e-9 then
      tick_col[#tick_col + 1] = { c = min(w, floor(f * (pxw - 1) / 2 + 0.5) + 1), label = xa.labels[i] }
    end
  end
  local cells = {}
  for c = 1, w do cells[c] = "\u{2500}" end
  for _, t in ipairs(tick_col) do cells[t.c] = "\u{252C}" end
  out[#out + 1] = concat(axis_line) .. concat(cells)
  local lab_cells, last_end = {}, 0
  local total = lw + 1 + w
  for _, t in ipairs(tick_col) do
    local s = chars(t.label)
    local start = lw + 1 + t.c - (#s // 2)
    if start < 1 then start = 1 end
    if start + #s - 1 > total then start = total - #s + 1 end
    if start > last_end + 1 or last_end == 0 then
      for j = 1, #s do lab_cells[start + j - 1] = s[j] end
      last_end = start + #s - 1
    end
  end
  local lab_line = {}
  for c = 1, max(last_end, 0) do lab_line[c] = lab_cells[c] or " " end
  out[#out + 1] = concat(lab_line)
  if p.x.label ~= "" then
    local t = p.x.label .. " \u{2192}"
    out[#out + 1] = string.rep(" ", max(0, lw + 1 + (w - ulen(t)) // 2)) .. t
  end

  -- legend: a sample of each series' line (same dash pattern) or marker
  for _, s in ipairs(p.series) do
    if s.label then
      local sample
      if s.style == "points" then
        sample = "  " .. POINT_CHARS[(s.index - 1) % #POINT_CHARS + 1] .. "   "
      else
        local pat, tot = dot_pattern(s.dash)
        local b = {}
        for c = 0, 5 do
          local v = 0
          for dx = 0, 1 do
            if pattern_on(pat, tot, c * 2 + dx) then v = v | BIT[dx][1] end
          end
          b[#b + 1] = utf8.char(0x2800 + v)
        end
        sample = concat(b)
      end
      out[#out + 1] = string.rep(" ", lw + 2) .. paint(sample, s.index) .. " " .. s.label
    end
  end
  if #p.marks > 0 and p.marks_label then
    out[#out + 1] = string.rep(" ", lw + 2) .. "  " .. MARK .. "    " .. p.marks_label
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
