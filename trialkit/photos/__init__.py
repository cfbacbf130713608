"""Photos: rust coverage measured from photographs of coupons.

Holds the settings of a measurement and the trial file's ``[photos]`` section
(``settings``), reading a photograph (``reading``: any format Pillow reads, EXIF
orientation applied, greyscale and transparency handled), the regions that stand out
from a plain background (``regions``), a grey or white card found without a box
(``card``), the measurement itself (``measure``: coupon found, white balance from the
card, rust told from steel in CIELAB), the small overlay images that show the classification
(``overlay``) and the entry of measured coverages into the record log with the photo as
their source (``record``).

May import: ``trialkit.responses``, ``trialkit.records``, ``trialkit.chemistry``,
``trialkit.planning``, ``trialkit.trial`` and the shared modules.
"""
