"""The app's screens: board, batch, recording, preparing, review desk, audit."""
