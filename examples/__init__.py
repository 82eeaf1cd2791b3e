"""Demo cases of our own (invented scenarios, small and slow enough to stay laminar, with real fluid properties:
water at 20 °C 998.2 kg/m³ and 1.004e-6 m²/s, at 15 °C 999.1 kg/m³ and 1.139e-6 m²/s, air at 20 °C 1.204 kg/m³ and
1.516e-5 m²/s, from common property tables). None is a full-size structure: real piers, cables and vanes meet
Reynolds numbers of 1e4 to 1e7 and turbulent flow, which wakeyard does not model.

Package data of ``wakeyard.examples``, so an installed service finds them: ``GET /api/v1/examples`` serves every
``*.json`` here, and the page offers exactly these."""
