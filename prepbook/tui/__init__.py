"""prepbook's full-screen terminal app (``prepbook tui``).

Screens call the same services as the command line (``prepbook.lab``); no rule or
computation lives here. Textual is imported only when the app is started.
"""
