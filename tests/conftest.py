"""Settings shared by every test folder: the size of the property-based attacks.

Tests that fuzz hostile input (``test_*_fuzz.py``) take their number of examples from the
``fourfold`` hypothesis profile: a bounded number in the suite (``FOURFOLD_FUZZ_EXAMPLES``,
default 40), many more from ``tests/bench/fuzz_hostile.py``. Tests that set ``max_examples``
themselves are not affected.
"""

import os

from hypothesis import settings

settings.register_profile("fourfold",
                          max_examples=int(os.environ.get("FOURFOLD_FUZZ_EXAMPLES", "40")))
settings.load_profile("fourfold")
