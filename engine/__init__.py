"""obligor-memo engine: pure computation of one borrower's expected-loss case.

Nothing here imports Streamlit, plotly, Jinja2 or WeasyPrint, writes files or
touches the network. Data flows one way: a validated case in, frozen results out.
"""

__version__ = "0.1.0"
ENGINE_VERSION = __version__
