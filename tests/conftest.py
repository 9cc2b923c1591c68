"""Suite-wide setup.

A fresh install makes its own random bundle key, so two test databases could not exchange file
bundles; the suite gives every database it creates one test key (the environment variable a firm
sets for the same purpose). Tests of the per-install key unset it themselves.
"""

import os

os.environ.setdefault("BRACEWALK_FIRM_KEY", "bracewalk-test-suite-key-tests-only")
