"""Risk judgement: criteria, step details, proof test, IPL checks, the risk picture."""
