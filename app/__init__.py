"""The front end: the command line, the workbench, the printed memo, its charts and batch runs."""
