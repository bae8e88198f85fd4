"""matplotlib figures (Agg backend, PNG files), one module per topic."""
import matplotlib

matplotlib.use("Agg")
