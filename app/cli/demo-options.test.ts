import { expect, test } from "vitest";
import { parseDemoOptions } from "./demo-options";

test("the demo's ports: defaults 3000 and 2525, PORT and SMTP_PORT from the environment, flags over both", () => {
  expect(parseDemoOptions([], {})).toEqual({ ok: true, options: { port: 3000, smtpPort: 2525 } });
  expect(parseDemoOptions([], { PORT: "4100", SMTP_PORT: "4125" })).toEqual({ ok: true, options: { port: 4100, smtpPort: 4125 } });
  expect(parseDemoOptions(["--port", "5000", "--smtp-port=5025"], { PORT: "4100", SMTP_PORT: "4125" })).toEqual({ ok: true, options: { port: 5000, smtpPort: 5025 } });
  expect(parseDemoOptions([], { PORT: "" })).toEqual({ ok: true, options: { port: 3000, smtpPort: 2525 } });
});

test("bad ports get a clear error naming the setting", () => {
  expect(parseDemoOptions([], { PORT: "80a" })).toEqual({ ok: false, error: 'PORT needs a whole number from 1 to 65535 (got "80a").' });
  expect(parseDemoOptions([], { SMTP_PORT: "70000" })).toEqual({ ok: false, error: 'SMTP_PORT needs a whole number from 1 to 65535 (got "70000").' });
  expect(parseDemoOptions(["--port"], {})).toEqual({ ok: false, error: "--port needs a whole number from 1 to 65535 (got nothing)." });
  expect(parseDemoOptions([], { PORT: "2525" })).toMatchObject({ ok: false, error: expect.stringMatching(/cannot share port 2525/) });
  expect(parseDemoOptions(["--portal"], {})).toMatchObject({ ok: false, error: expect.stringMatching(/^Unknown option --portal\./) });
});
