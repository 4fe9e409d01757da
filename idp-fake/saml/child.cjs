// Runs saml-idp (same command-line options as its own `saml-idp` command) and ends it when
// the process that started it goes away, even if that process was killed outright: the
// parent holds this process's stdin open, and it closes when the parent ends.
"use strict";
process.stdin.on("end", () => process.exit(0));
process.stdin.on("error", () => process.exit(0));
process.stdin.resume();
require("saml-idp/app").main();
