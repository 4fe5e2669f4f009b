"""The workbench's pages: one Streamlit script per step of the job, in the order of ``ui.PAGES``."""
