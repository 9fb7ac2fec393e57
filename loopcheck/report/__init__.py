"""Reports: text, JSON, SARIF 2.1.0, JUnit XML and HTML with SVG pictures. Reports never compute."""
