"""Reports: tables, charts, HTML/PDF rendering and the papermill build. No physics here."""
