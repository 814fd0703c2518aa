"""The plot of ``heatscreen kinetics --plot``: each run's data against the fitted models (a PDF)."""
from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from screening.report.charts import TRACE, TRACE_2, ChartFonts, Series, line_chart
from screening.report.pdf import _FONT_NAMES, _register_fonts

_DATA = "#777777"


def _plain(text: str, limit: int = 90) -> str:
    """A file name as plain printable text for a chart title (no control or unusual characters)."""
    text = re.sub(r"[^\x20-\x7e]", "?", str(text))
    return text if len(text) <= limit else "..." + text[-(limit - 3):]


def _charts_for_dsc(result: dict, fonts: ChartFonts, width: float, height: float):
    from reportlab.lib import colors

    from screening.core.kinetics_fit import fitted_heat_flows

    plot = result["_plot"]
    fits = plot["fits"]
    curves = {name: fitted_heat_flows(fit, plot["fit_inputs"]) for name, fit in fits.items()}
    charts = []
    for i, path in enumerate(plot["runs"]):
        t, temp, measured, _ = curves[next(iter(curves))][i]
        xs = (t / 60.0) if plot["isothermal"] else (temp - 273.15)
        series = [Series(list(xs), list(measured / 1000.0), "data (net of the fitted baseline)",
                         colors.HexColor(_DATA), 0.6)]
        for (name, c), colour, dash in zip(curves.items(), (TRACE, TRACE_2), (None, (4, 2))):
            series.append(Series(list(xs), list(c[i][3] / 1000.0), f"{name} fit", colour, 1.2, dash))
        title = _plain(Path(path).name)
        drawing = line_chart(width, height, series, fonts, "time [min]" if plot["isothermal"] else "temperature [degC]",
                             "heat flow [W/g]")
        charts.append((title, drawing))
    return charts


def _charts_for_adiabatic(result: dict, fonts: ChartFonts, width: float, height: float):
    from reportlab.lib import colors

    plot = result["_plot"]
    fit = plot["fit"]
    temp = np.asarray(plot["temperature"])
    rate = np.asarray(plot["rate"])
    ok = rate > 0
    tc = np.asarray(plot["temperature_corrected"])
    rc = np.asarray(plot["rate_corrected"])
    okc = rc > 0
    rise = plot["final"] - plot["onset"]
    alpha = np.clip((temp - plot["onset"]) / rise, 0.0, 1.0 - 1e-9)
    model = rise * fit.rate(temp, alpha)  # dT/dt = (Tf - T0) k(T) (1 - alpha)^n
    okm = model > 0
    series = [Series(list(temp[ok] - 273.15), list(np.log10(rate[ok] * 60.0)), "measured", colors.HexColor(_DATA), 0.8),
              Series(list(temp[okm] - 273.15), list(np.log10(model[okm] * 60.0)), "n-th-order fit", TRACE, 1.2),
              Series(list(tc[okc] - 273.15), list(np.log10(rc[okc] * 60.0)), "corrected to phi = 1", TRACE_2, 1.2,
                     (4, 2))]
    return [(_plain(Path(plot["file"]).name),
             line_chart(width, height, series, fonts, "temperature [degC]", "log10 self-heat rate [K/min]"))]


def write_kinetics_plot(path, result: dict) -> None:
    """Draw the runs and the fitted models into a PDF at ``path`` (A4, two charts a page)."""
    from reportlab.graphics import renderPDF
    from reportlab.lib.pagesizes import A4
    from reportlab.pdfgen import canvas

    _register_fonts()
    fonts = ChartFonts(regular=_FONT_NAMES["regular"], bold=_FONT_NAMES["bold"], size=7.5)
    page_w, page_h = A4
    margin = 50.0
    width, height = page_w - 2 * margin, (page_h - 2 * margin - 90) / 2
    charts = (_charts_for_adiabatic if result["_plot"].get("adiabatic") else _charts_for_dsc)(result, fonts,
                                                                                              width, height - 20)
    c = canvas.Canvas(str(path), pagesize=A4, invariant=1)
    c.setTitle("heatscreen kinetics: data and fitted models")
    for k in range(0, len(charts), 2):
        y = page_h - margin
        c.setFont(_FONT_NAMES["bold"], 11)
        c.drawString(margin, y - 12, "Calorimeter data and fitted kinetics")
        c.setFont(_FONT_NAMES["regular"], 7.5)
        c.drawString(margin, y - 26, f"Model chosen: {result['model']}. Screening estimate only: check the fit "
                                     f"against the data; kinetics outside the tested range are extrapolated.")
        y -= 40
        for title, drawing in charts[k:k + 2]:
            c.setFont(_FONT_NAMES["bold"], 9)
            c.drawString(margin, y - 10, title)
            renderPDF.draw(drawing, c, margin, y - 14 - drawing.height)
            y -= height + 10
        c.showPage()
    c.save()
