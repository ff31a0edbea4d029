"""The run engine: a catalogue in, the same catalogue with stage columns out.

Layered between the catalogue I/O (:mod:`hrstage.catalog`) and the faces (the Python API
``hrstage.classify``, the command line, the Dask face), which all call it:

- :mod:`.options` - keyword options checked once (:func:`make_options`) and resolved against the
  input's columns (:func:`resolve_options`); the run metadata;
- :mod:`.routing` - every row to an HR position by the profile's routes, with row-wise fall-back;
- :mod:`.compute` - the per-chunk computation: role columns in, our columns out (numpy);
- :mod:`.convert` - our columns to Arrow, and the metadata of an Arrow chunk;
- :mod:`.chunk` - one chunk, astropy or Arrow, in and out (:func:`classify_chunk`,
  :func:`classify_table`), and :func:`~.chunk.classify_one`, the one path of a file run's chunks;
- :mod:`.threads`, :mod:`.workers`, :mod:`.files` - file execution (:func:`classify_file`):
  streaming, read-ahead / write-behind threads, worker processes.

For every row the engine

1. reads the columns of the detected (or named) profile (:mod:`hrstage.catalog.profiles`) and
   cleans them (:mod:`hrstage.catalog.sanity`: units, fill values, masks);
2. places the star on the HR diagram (:mod:`hrstage.derive`) by the first route of the profile
   whose inputs the row has (Teff+L, Teff+R, Gaia photometry+parallax, Johnson+parallax,
   Teff+log g), falling back row by row to the next route;
3. labels it (:func:`hrstage.classifier.classify_hr`) and, when an MK type column is present,
   checks the type (:func:`hrstage.sptype.check_types`).

Every input row comes out, in input order, with its columns untouched; a row that cannot be placed
is ``unclassified`` with the reason in ``flag_text``. Labels are indicative: they come from analytic
relations and the HR position and do not replace a spectroscopic analysis.
"""

from .chunk import classify_chunk, classify_table
from .convert import DICTIONARY_COLUMNS, FEW_VALUED_NUMBERS
from .files import classify_file
from .options import ALWAYS_ADDED, BRIEF_COLUMNS, CAUTION, ClassifyOptions, make_options, resolve_options
from .workers import resolve_workers

__all__ = ["classify_table", "classify_chunk", "classify_file", "make_options", "resolve_options",
           "resolve_workers", "ClassifyOptions", "CAUTION", "ALWAYS_ADDED", "BRIEF_COLUMNS",
           "DICTIONARY_COLUMNS", "FEW_VALUED_NUMBERS"]
