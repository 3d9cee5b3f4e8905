"""The bundled demo scenario (an invented family shipped as a plug-in file)."""
import os

#: the demo family's plug-in file, loaded like a researcher's own family file
FAMILY_FILE = os.path.join(os.path.dirname(os.path.abspath(__file__)), "layered_cloud_ads.py")
