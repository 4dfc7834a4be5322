--- segwise.plot: SVG files and terminal plots of curves, models, knots,
-- load lines and operating points.  Layout and drawing only; the numbers
-- come from the C core.
--
--   plot.svg(path, spec)    standalone SVG, written atomically; returns the text
--   plot.term(spec, opts)   Unicode braille plot; returns the text, prints it
--                           unless opts.print == false
--   plot.ticks(lo, hi, {log=, unit=, n=})  the axis used by both
--   plot.fit_spec(curve, models, opts)     spec: curve, model(s), knots
--   plot.error_spec(curve, models, opts)   spec: error of each model against x
--   plot.series_from_rows(rows, xkey, ykeys)  series from sweep rows
--
-- spec = {title=, x={label=, unit=, log=, min=, max=}, y={...},
--         series={{x=, y=, label=, style="line"|"points"|"step", marker=}, ...},
--         marks={{x=, y=, label=}, ...}}
-- @module segwise.plot

local svg = require "segwise.plot.svg"
local term = require "segwise.plot.term"
local axis = require "segwise.plot.axis"
local common = require "segwise.plot.common"
local specs = require "segwise.plot.specs"

return {
  svg = svg.write,
  svg_string = svg.render,
  term = term.draw,
  ticks = axis.new,
  escape = svg.escape,
  fit_spec = specs.fit,               -- curve + model(s) with knots
  error_spec = specs.error,           -- model - curve against x (rel = true: %)
  series_from_rows = specs.rows,      -- sweep rows -> series
  PALETTE = common.PALETTE,
  DASHES = common.DASHES,
}
