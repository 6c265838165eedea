// glowlog's own script: nothing inline (CSP script-src 'self').
