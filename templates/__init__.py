"""The memo's Jinja2 templates and print CSS (data only; installed as obligor_memo.templates)."""
