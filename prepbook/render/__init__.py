"""What leaves the database on paper or in a file: labels, reports, exports.

Pure rendering: these modules take plain data (dicts from the services) and
produce bytes or files; they never open the database. reportlab, qrcode and
pandas are imported inside the functions that draw or write, so the board and
``prepbook calc`` never pay for them.
"""
