export const CHROMIUM_PATH = process.env.CHROMIUM_PATH ?? "/usr/bin/chromium";
