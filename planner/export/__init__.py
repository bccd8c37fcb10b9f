"""Export: each band's coefficients at each sample rate, proved in the target arithmetic.

For every requested rate the project is redesigned at that rate (each
filter's parameters are checked there first, so a filter at or above the
rate's Nyquist frequency is refused by name) and analysed as ``check``
analyses it. Each band's sections are then laid out for the DSP
(:data:`SECTION_MODES`): ``per-filter`` keeps every filter's own sections,
in chain order, each labelled with its filter, so they map onto a DSP's
per-filter slots; ``paired`` re-pairs the band's poles and zeros and orders
the sections with the poles nearest the unit circle last
(:func:`planner.dsp.fixed.sections.pair_sections`). Both keep every numerator's
shape, so zeros at ``z = +1/-1`` stay exact. For a fixed-point target the
numerators are scaled so that the signal peaks at full
scale after each section (:func:`planner.dsp.fixed.sections.scale_sections`), with
what is left of the band's gain in ``scale``. The sections are rounded to the
target number format (:func:`planner.dsp.fixed.quantize_sos`, with a
post-shift per section where a fixed-point word cannot hold them), and the
coefficients as written are compared with the design ``check`` analysed:
nothing is written that differs from what was checked by more than
:data:`MAX_DEVIATION_DB` where the response matters.

Files are written per rate (JSON, CSV, text or one WAV impulse response per
band; several formats in one run share one design and one check) and the
folder's manifest ties every file of the project's exports present there to
the project's content hash, the settings and the check results at each rate.

The coefficient convention of every file: each section is
``[b0, b1, b2, a1, a2]`` with ``a0 = 1`` and the transfer function
``(b0 + b1 z^-1 + b2 z^-2) / (1 + a1 z^-1 + a2 z^-2)``, i.e. the recursion
``y[n] = b0 x[n] + b1 x[n-1] + b2 x[n-2] - a1 y[n-1] - a2 y[n-2]``. With
``negate_feedback`` the files hold ``-a1, -a2`` instead (for engines that
add the feedback terms) and say so. A section with a post-shift ``k`` holds
its coefficients divided by ``2**k``; the DSP shifts the section's
accumulator left by ``k`` bits. A band's output is
``gain * scale * polarity * chain(x)`` delayed by ``delay_samples``.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Prentice Hall, 2010, sec. 6.3 (cascade form), 6.7 (coefficient
   quantisation), 6.9 (scaling for overflow).
.. [2] L. B. Jackson, "Digital Filters and Signal Processing", 3rd ed.,
   Kluwer, 1996, sec. 11.3-11.4 (scaling, pairing and ordering of sections).
.. [3] FIPS PUB 180-4, "Secure Hash Standard", NIST, 2015 (SHA-256).
"""

from planner.export.files import (EXTENSIONS, export_formats, file_sha256, merge_manifest,
                                  MANIFEST_FORMAT, MAX_SLUG_CHARS, RESERVED_STEMS, ExportResult, RunFiles, band_file_stems, short_stem,
                                  content_hash, rate_text, slug, write_export, write_file,
                                  write_text_file)
from planner.export.formats import (FORMAT, FORMATS, VERSION, WAV_FLOOR_DB, arith_dict,
                                    arith_text, band_impulse_response, to_csv_text,
                                    to_json_dict, to_text)
from planner.export.rate import (SECTION_MODES, BandExport, RateExport, export_rate,
                                 project_at_rate)
from planner.export.recheck import (ERROR_FLOOR_DB, MAX_DEVIATION_DB, RANGE_DB, RECHECK_POINTS,
                                    ArithResult, shown_against)

__all__ = ["EXTENSIONS", "export_formats", "file_sha256", "merge_manifest", "MANIFEST_FORMAT", "MAX_SLUG_CHARS", "RESERVED_STEMS", "ExportResult", "RunFiles", "band_file_stems", "short_stem", "content_hash",
           "rate_text", "slug", "write_export", "write_file", "write_text_file", "FORMAT",
           "FORMATS", "VERSION", "WAV_FLOOR_DB", "arith_dict", "arith_text",
           "band_impulse_response", "to_csv_text", "to_json_dict", "to_text", "SECTION_MODES",
           "BandExport", "RateExport", "export_rate", "project_at_rate", "ERROR_FLOOR_DB",
           "MAX_DEVIATION_DB", "RANGE_DB", "RECHECK_POINTS", "ArithResult", "shown_against"]
