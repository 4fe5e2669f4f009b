"""Text, tables and number formats shared by the command line, the workbench and the memo."""
