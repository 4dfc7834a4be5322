--- segwise.plot.svg: standalone SVG plots (curves, models, knots,
-- operating points) with SI tick labels, a legend, the Okabe-Ito palette
-- and dash patterns as a second cue for print.
-- @module segwise.plot.svg

local numtext = require "segwise.report.num" -- numbers with a '.' in any locale
local report = require "segwise.report"
local common = require "segwise.plot.common"

local M = {}
local fmt, concat = numtext.format, table.concat
local max = math.max

--- Escapes text for XML character data and attribute values; drops the
-- control characters XML 1.0 forbids (all below 0x20 except tab, LF, CR).
-- Invalid UTF-8 becomes U+FFFD first (common.text), so the file parses.
function M.escape(s)
  s = common.text(s)
  return (s:gsub("[&<>\"']", { ["&"] = "&amp;", ["<"] = "&lt;", [">"] = "&gt;",
    ['"'] = "&quot;", ["'"] = "&apos;" }))
end
local esc = M.escape

-- Width of text in px at font size fs, rough (sans-serif averages ~0.6 em).
local function text_w(s, fs) return (utf8.len(s) or #s) * fs * 0.6 end

local function num(v) return numtext.number("%.2f", v) end

local function marker_shape(kind, x, y, r, color)
  if kind == "square" then
    return fmt('<rect x="%s" y="%s" width="%s" height="%s" fill="%s"/>', num(x - r), num(y - r),
      num(2 * r), num(2 * r), color)
  elseif kind == "triangle" or kind == "triangle_down" then
    local d = kind == "triangle" and 1 or -1
    return fmt('<path d="M%s %s L%s %s L%s %s Z" fill="%s"/>', num(x), num(y - d * r * 1.2),
      num(x - r * 1.1), num(y + d * r * 0.8), num(x + r * 1.1), num(y + d * r * 0.8), color)
  elseif kind == "diamond" then
    return fmt('<path d="M%s %s L%s %s L%s %s L%s %s Z" fill="%s"/>', num(x), num(y - r * 1.3),
      num(x + r), num(y), num(x), num(y + r * 1.3), num(x - r), num(y), color)
  elseif kind == "cross" or kind == "plus" or kind == "star" then
    local parts = {}
    if kind ~= "plus" then
      parts[#parts + 1] = fmt("M%s %s L%s %s M%s %s L%s %s", num(x - r), num(y - r),
        num(x + r), num(y + r), num(x - r), num(y + r), num(x + r), num(y - r))
    end
    if kind ~= "cross" then
      parts[#parts + 1] = fmt("M%s %s L%s %s M%s %s L%s %s", num(x - r), num(y), num(x + r), num(y),
        num(x), num(y - r), num(x), num(y + r))
    end
    return fmt('<path d="%s" stroke="%s" stroke-width="2" fill="none"/>', concat(parts, " "), color)
  end
  return fmt('<circle cx="%s" cy="%s" r="%s" fill="%s"/>', num(x), num(y), num(r), color)
end

local function marker_kind(s)
  if s.marker == nil or s.marker == true then
    return common.MARKERS[(s.index - 1) % #common.MARKERS + 1]
  end
  return numtext.str(s.marker)
end

local function dash_attr(s, lw)
  if #s.dash == 0 then return "" end
  local d = {}
  for i, v in ipairs(s.dash) do d[i] = num(v * lw) end
  return fmt(' stroke-dasharray="%s"', concat(d, ","))
end

-- Width and height in whole px (a fractional size is rounded), checked.
local MAX_PX = 100000
local function page_size(spec, F)
  local W, H = spec.width or 720, spec.height or 450
  local function ok(v, least) return type(v) == "number" and v >= least and v <= MAX_PX end
  if not ok(W, 100) or not ok(H, 80) then
    error(fmt("%s: width and height must be numbers from 100 and 80 to %d px (got %s and %s)",
      F, MAX_PX, numtext.str(W), numtext.str(H)), 4)
  end
  return math.floor(W + 0.5), math.floor(H + 0.5)
end

--- Builds the SVG document as a string.
-- @tparam table spec see segwise.plot.svg
-- @treturn string
function M.render(spec)
  local F = "segwise.plot.svg"
  local p = common.normalise(spec, F)
  local W, H = page_size(spec, F)
  local fs = spec.font_size or 12
  local xa, ya = common.axes(p, F,
    { nx = max(3, math.floor(W / 110)), ny = max(3, math.floor(H / 70)) })

  local ylw = 0
  for _, l in ipairs(ya.labels) do ylw = max(ylw, text_w(l, fs)) end
  local left = 14 + ylw + 8 + (p.y.label ~= "" and fs * 1.6 or 0)
  local top = p.title and (fs * 2.8) or 14
  local bottom = 12 + fs * 1.4 + (p.x.label ~= "" and fs * 1.8 or 0)
  local right = 10 + text_w(xa.labels[#xa.labels] or "", fs) / 2
  local pw, ph = W - left - right, H - top - bottom
  local function X(f) return left + f * pw end
  local function Y(f) return top + (1 - f) * ph end

  local o = {}
  local function add(...) o[#o + 1] = fmt(...) end
  add('<?xml version="1.0" encoding="UTF-8"?>')
  add('<svg xmlns="http://www.w3.org/2000/svg" width="%d" height="%d" viewBox="0 0 %d %d" '
    .. 'font-family="DejaVu Sans, Helvetica, Arial, sans-serif" font-size="%s">',
    W, H, W, H, num(fs))
  add("<title>%s</title>", esc(p.title or "segwise plot"))
  add('<defs><clipPath id="sw-plot-area">'
    .. '<rect x="%s" y="%s" width="%s" height="%s"/></clipPath></defs>',
    num(left), num(top), num(pw), num(ph))
  add('<rect x="0" y="0" width="%d" height="%d" fill="#ffffff"/>', W, H)
  if p.title then
    add('<text x="%s" y="%s" text-anchor="middle" font-size="%s" font-weight="bold">%s</text>',
      num(left + pw / 2), num(fs * 1.7), num(fs * 1.25), esc(p.title))
  end

  -- grid and ticks
  add('<g class="grid" stroke="#d9d9d9" stroke-width="1">')
  for _, v in ipairs(xa.ticks) do
    local f = xa.map(v)
    if f and f >= -1e-9 and f <= 1 + 1e-9 then
      add('<line x1="%s" y1="%s" x2="%s" y2="%s"/>', num(X(f)), num(top), num(X(f)),
        num(top + ph))
    end
  end
  for _, v in ipairs(ya.ticks) do
    local f = ya.map(v)
    if f and f >= -1e-9 and f <= 1 + 1e-9 then
      add('<line x1="%s" y1="%s" x2="%s" y2="%s"/>', num(left), num(Y(f)), num(left + pw),
        num(Y(f)))
    end
  end
  add("</g>")
  add('<rect class="frame" x="%s" y="%s" width="%s" height="%s" fill="none" '
    .. 'stroke="#333333" stroke-width="1"/>',
    num(left), num(top), num(pw), num(ph))
  add('<g class="x-ticks" text-anchor="middle" fill="#222222">')
  for i, v in ipairs(xa.ticks) do
    local f = xa.map(v)
    if f and f >= -1e-9 and f <= 1 + 1e-9 then
      add('<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#333333"/>', num(X(f)), num(top + ph),
        num(X(f)), num(top + ph + 5))
      add('<text x="%s" y="%s">%s</text>', num(X(f)), num(top + ph + 6 + fs), esc(xa.labels[i]))
    end
  end
  add("</g>")
  add('<g class="y-ticks" text-anchor="end" fill="#222222">')
  for i, v in ipairs(ya.ticks) do
    local f = ya.map(v)
    if f and f >= -1e-9 and f <= 1 + 1e-9 then
      add('<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#333333"/>', num(left - 5), num(Y(f)),
        num(left), num(Y(f)))
      add('<text x="%s" y="%s">%s</text>', num(left - 8), num(Y(f) + fs * 0.35), esc(ya.labels[i]))
    end
  end
  add("</g>")
  if p.x.label ~= "" then
    add('<text class="x-label" x="%s" y="%s" text-anchor="middle">%s</text>',
      num(left + pw / 2), num(H - 8), esc(p.x.label))
  end
  if p.y.label ~= "" then
    add('<text class="y-label" transform="translate(%s %s) rotate(-90)" '
      .. 'text-anchor="middle">%s</text>',
      num(fs * 1.2), num(top + ph / 2), esc(p.y.label))
  end

  -- series, clipped to the plot area
  add('<g class="series" clip-path="url(#sw-plot-area)" fill="none">')
  for _, s in ipairs(p.series) do
    local lw = s.width or 2
    local runs = common.runs(s, xa, ya)
    if s.style ~= "points" then
      local d = {}
      for _, r in ipairs(runs) do
        for k = 1, #r, 2 do
          d[#d + 1] = (k == 1 and "M" or "L") .. num(X(r[k])) .. " " .. num(Y(r[k + 1]))
        end
      end
      if #d > 0 then
        add('<path d="%s" stroke="%s" stroke-width="%s" stroke-linejoin="round"%s/>',
          concat(d, " "), esc(s.color), num(lw), dash_attr(s, lw))
      end
    end
    if s.style == "points" or s.marker then
      local kind = marker_kind(s)
      for k = 1, #s.x do
        local fx, fy = xa.map(s.x[k]), ya.map(s.y[k])
        if fx and fy then o[#o + 1] = marker_shape(kind, X(fx), Y(fy), 3.5, esc(s.color)) end
      end
    end
  end
  add("</g>")

  -- marks: knots, operating points
  if #p.marks > 0 then
    add('<g class="marks">')
    for _, m in ipairs(p.marks) do
      local fx, fy = xa.map(m.x), ya.map(m.y)
      if fx and fy and fx >= -1e-9 and fx <= 1 + 1e-9 and fy >= -1e-9 and fy <= 1 + 1e-9 then
        local x, y = X(fx), Y(fy)
        add('<circle cx="%s" cy="%s" r="4.5" fill="#ffffff" stroke="#000000" '
          .. 'stroke-width="1.5"/>', num(x), num(y))
        if m.label then
          local anchor = fx > 0.8 and "end" or "start"
          local dx = anchor == "end" and -7 or 7
          add('<text x="%s" y="%s" text-anchor="%s" font-size="%s" fill="#000000">%s</text>',
            num(x + dx), num(y - 7), anchor, num(fs * 0.9), esc(m.label))
        end
      end
    end
    add("</g>")
  end

  -- legend inside the plot area, in the corner holding the fewest points
  -- (spec.legend = "left" | "right" | "bottom left" | "bottom right" fixes it)
  local labelled = {}
  for _, s in ipairs(p.series) do if s.label then labelled[#labelled + 1] = s end end
  local entries = #labelled + ((p.marks_label and #p.marks > 0) and 1 or 0)
  if entries > 0 and spec.legend ~= false then
    local lw = p.marks_label and text_w(p.marks_label, fs) or 0
    for _, s in ipairs(labelled) do lw = max(lw, text_w(s.label, fs)) end
    local bw, bh = lw + 52, entries * fs * 1.5 + 8
    local corners = {
      left = { left + 8, top + 8 }, right = { left + pw - bw - 8, top + 8 },
      ["bottom left"] = { left + 8, top + ph - bh - 8 },
      ["bottom right"] = { left + pw - bw - 8, top + ph - bh - 8 },
    }
    local choice = corners[spec.legend]
    if not choice then
      local best
      for _, name in ipairs { "left", "right", "bottom right", "bottom left" } do
        local c = corners[name]
        local n = 0
        for _, s in ipairs(p.series) do
          for k = 1, #s.x do
            local fx, fy = xa.map(s.x[k]), ya.map(s.y[k])
            if fx and fy then
              local x, y = X(fx), Y(fy)
              if x >= c[1] - 4 and x <= c[1] + bw + 4 and y >= c[2] - 4 and y <= c[2] + bh + 4 then
                n = n + 1
              end
            end
          end
          -- a line crossing the box counts too: sample between the points
          local runs = common.runs(s, xa, ya)
          for _, r in ipairs(runs) do
            for k = 1, #r - 2, 2 do
              for t = 0.25, 0.75, 0.25 do
                local x = X(r[k] + t * (r[k + 2] - r[k]))
                local y = Y(r[k + 1] + t * (r[k + 3] - r[k + 1]))
                if x >= c[1] and x <= c[1] + bw and y >= c[2] and y <= c[2] + bh then n = n + 1 end
              end
            end
          end
        end
        if not best or n < best then best, choice = n, c end
      end
    end
    local bx, by = choice[1], choice[2]
    add('<g class="legend">')
    add('<rect x="%s" y="%s" width="%s" height="%s" fill="#ffffff" fill-opacity="0.9" '
      .. 'stroke="#999999"/>',
      num(bx), num(by), num(bw), num(bh))
    for i, s in ipairs(labelled) do
      local y = by + 4 + (i - 0.5) * fs * 1.5
      local lwid = s.width or 2
      if s.style ~= "points" then
        add('<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="%s" stroke-width="%s"%s/>',
          num(bx + 6), num(y), num(bx + 38), num(y), esc(s.color), num(lwid), dash_attr(s, lwid))
      end
      if s.style == "points" or s.marker then
        o[#o + 1] = marker_shape(marker_kind(s), bx + 22, y, 3.5, esc(s.color))
      end
      add('<text x="%s" y="%s">%s</text>', num(bx + 44), num(y + fs * 0.35), esc(s.label))
    end
    if p.marks_label and #p.marks > 0 then
      local y = by + 4 + (#labelled + 0.5) * fs * 1.5
      add('<circle cx="%s" cy="%s" r="4.5" fill="#ffffff" stroke="#000000" '
        .. 'stroke-width="1.5"/>', num(bx + 22), num(y))
      add('<text x="%s" y="%s">%s</text>', num(bx + 44), num(y + fs * 0.35), esc(p.marks_label))
    end
    add("</g>")
  end
  add("</svg>")
  return concat(o, "\n") .. "\n"
end

--- Writes a standalone SVG file (atomically, through segwise.report.write).
-- @tparam string path
-- @tparam table spec {title=, x={label=, unit=, log=, min=, max=}, y={...},
--   series={{x=, y= (array or function of x), label=, style="line"|"points"|"step",
--   marker=, color=, dash=, width=}...}, marks={{x=, y=, label=}...},
--   marks_label = text for the marks in the legend,
--   width=720, height=450, legend=true|false|"left"|"right"|"bottom left"|"bottom right"}
-- @treturn string the SVG text
function M.write(path, spec)
  if type(path) ~= "string" or path == "" then
    error("segwise.plot.svg: path must be a file name (got " .. type(path) .. ")", 2)
  end
  local s = M.render(spec)
  return report.write(path, s, "segwise.plot.svg")
end

return M
