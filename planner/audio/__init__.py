"""Audio: WAV files (:mod:`~planner.audio.wav`) and audio run through exported bands
(:mod:`~planner.audio.render`)."""
