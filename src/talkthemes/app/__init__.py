"""The Streamlit viewer: ``main.py`` is the entry point, one module per section.

Run it with ``talkthemes view`` (see :func:`talkthemes.serve.serve`). The pages only
arrange what :mod:`talkthemes.view` and :mod:`talkthemes.charts` compute.
"""
