"""Reading fleet, event and weather files: pint at this edge only, SI floats out."""
