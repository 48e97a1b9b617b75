"""ventflux-video: velocities, exit velocity and buoyancy flux of vent jets from video.

Modules, one job each:

* ``frames``: streamed frames from a video file or an image sequence.
* ``scale``: pixel size from two points a known distance apart or two laser spots.
* ``correlation``: FFT window cross-correlation (batched), multi-pass, outlier test, averaging.
* ``tracking``: particle detection and linking for sparse targets.
* ``plume``: pure-plume theory, buoyancy flux and heat power.
* ``jet``: centreline profile, exit velocity and the clip-to-result pipeline.
* ``synthetic``: particle images and a plume clip with known answers.

Image orientation: frames are stored with row 0 at the top. Every velocity this
package reports is in a right-handed frame with ``u`` to the right and ``w``
*up* (against the row index), so a rising jet has ``w > 0``.
"""

__version__ = "0.2.0"  # the one version source (pyproject.toml reads it)
