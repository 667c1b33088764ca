"""Rendering: the results document as charts (SVG), one HTML page, and a PDF of that page.

Three steps, each a function of the JSON document ``results_to_dict(results)`` and nothing else:

- :func:`reportgen.render.plots.render_plots` draws every chart as inline SVG;
- :func:`reportgen.render.html.render_html` fills the templates (user folders first, then the
  packaged ``templates/``) and inlines the stylesheet and the charts;
- :func:`reportgen.render.pdf.render_pdf` lays the same HTML out as A4 PDF, loading local files only.

Rendering never computes a statistic; it formats what the document holds. The submodules are not
imported here, so drawing charts does not load WeasyPrint and writing JSON loads neither.
"""
