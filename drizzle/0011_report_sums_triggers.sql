-- issue 16 (u16): report_sums (app/db/schema.ts) kept by triggers on shots. drizzle-kit does not emit
-- triggers, so this is a custom migration (`npx drizzle-kit generate --custom --name report_sums_triggers`).
-- The keys are app/domain's reflectanceIndex and illuminanceIndex (ranging.md §5) and floor(reference_m);
-- 50 klux is BRIGHT_SUN_KLUX; "known u_ref" is the test of the report's grouped query
-- (app/models/report-sums.server.ts). An update that changes no summed column fires nothing.
CREATE TRIGGER report_sums_insert AFTER INSERT ON shots BEGIN
  INSERT INTO report_sums (sensor_id, session_id, excl, rc, lb, dbin, n, k_e, k_d, s1, s2, sq, d1, d2, de, sum_d, sum_u2, unknown_u, sun, air)
  VALUES (NEW.sensor_id, NEW.session_id, CASE WHEN NEW.excluded THEN 1 ELSE 0 END, CASE WHEN NEW.retro THEN 3 WHEN NEW.reflectance_pct < 20 THEN 0 WHEN NEW.reflectance_pct <= 60 THEN 1 ELSE 2 END, CASE WHEN NEW.illuminance_klux IS NULL THEN -1 WHEN NEW.illuminance_klux < 10 THEN 0 WHEN NEW.illuminance_klux < 50 THEN 1 ELSE 2 END, CAST(NEW.reference_m AS INTEGER), 1, NEW.error_mm, NEW.reference_m, 0, 0, NEW.error_mm * NEW.error_mm, 0, 0, 0, NEW.reference_m, CASE WHEN NEW.reference_uncertainty_mm >= 0 AND NEW.reference_uncertainty_mm <= 1.7976931348623157e308 THEN NEW.reference_uncertainty_mm * NEW.reference_uncertainty_mm ELSE 0 END, CASE WHEN NEW.reference_uncertainty_mm >= 0 AND NEW.reference_uncertainty_mm <= 1.7976931348623157e308 THEN 0 ELSE 1 END, CASE WHEN NEW.illuminance_klux >= 50 THEN 1 ELSE 0 END, CASE WHEN NEW.air_defaulted THEN 1 ELSE 0 END)
  ON CONFLICT (sensor_id, session_id, excl, rc, lb, dbin) DO UPDATE SET
    n = n + 1,
    s1 = s1 + (excluded.k_e - k_e),
    s2 = s2 + (excluded.k_e - k_e) * (excluded.k_e - k_e),
    sq = sq + excluded.sq,
    d1 = d1 + (excluded.k_d - k_d),
    d2 = d2 + (excluded.k_d - k_d) * (excluded.k_d - k_d),
    de = de + (excluded.k_d - k_d) * (excluded.k_e - k_e),
    sum_d = sum_d + excluded.sum_d,
    sum_u2 = sum_u2 + excluded.sum_u2,
    unknown_u = unknown_u + excluded.unknown_u,
    sun = sun + excluded.sun,
    air = air + excluded.air;
END;
--> statement-breakpoint
CREATE TRIGGER report_sums_delete AFTER DELETE ON shots BEGIN
  UPDATE report_sums SET
    n = n - 1,
    s1 = s1 - (OLD.error_mm - k_e),
    s2 = s2 - (OLD.error_mm - k_e) * (OLD.error_mm - k_e),
    sq = sq - OLD.error_mm * OLD.error_mm,
    d1 = d1 - (OLD.reference_m - k_d),
    d2 = d2 - (OLD.reference_m - k_d) * (OLD.reference_m - k_d),
    de = de - (OLD.reference_m - k_d) * (OLD.error_mm - k_e),
    sum_d = sum_d - OLD.reference_m,
    sum_u2 = sum_u2 - CASE WHEN OLD.reference_uncertainty_mm >= 0 AND OLD.reference_uncertainty_mm <= 1.7976931348623157e308 THEN OLD.reference_uncertainty_mm * OLD.reference_uncertainty_mm ELSE 0 END,
    unknown_u = unknown_u - CASE WHEN OLD.reference_uncertainty_mm >= 0 AND OLD.reference_uncertainty_mm <= 1.7976931348623157e308 THEN 0 ELSE 1 END,
    sun = sun - CASE WHEN OLD.illuminance_klux >= 50 THEN 1 ELSE 0 END,
    air = air - CASE WHEN OLD.air_defaulted THEN 1 ELSE 0 END
  WHERE sensor_id = OLD.sensor_id AND session_id = OLD.session_id AND excl = CASE WHEN OLD.excluded THEN 1 ELSE 0 END AND rc = CASE WHEN OLD.retro THEN 3 WHEN OLD.reflectance_pct < 20 THEN 0 WHEN OLD.reflectance_pct <= 60 THEN 1 ELSE 2 END AND lb = CASE WHEN OLD.illuminance_klux IS NULL THEN -1 WHEN OLD.illuminance_klux < 10 THEN 0 WHEN OLD.illuminance_klux < 50 THEN 1 ELSE 2 END AND dbin = CAST(OLD.reference_m AS INTEGER);
  DELETE FROM report_sums WHERE sensor_id = OLD.sensor_id AND session_id = OLD.session_id AND excl = CASE WHEN OLD.excluded THEN 1 ELSE 0 END AND rc = CASE WHEN OLD.retro THEN 3 WHEN OLD.reflectance_pct < 20 THEN 0 WHEN OLD.reflectance_pct <= 60 THEN 1 ELSE 2 END AND lb = CASE WHEN OLD.illuminance_klux IS NULL THEN -1 WHEN OLD.illuminance_klux < 10 THEN 0 WHEN OLD.illuminance_klux < 50 THEN 1 ELSE 2 END AND dbin = CAST(OLD.reference_m AS INTEGER) AND n <= 0;
END;
--> statement-breakpoint
CREATE TRIGGER report_sums_update AFTER UPDATE OF sensor_id, session_id, excluded, retro, reflectance_pct, illuminance_klux, reference_m, error_mm, reference_uncertainty_mm, air_defaulted ON shots
  WHEN OLD.sensor_id IS NOT NEW.sensor_id OR OLD.session_id IS NOT NEW.session_id OR OLD.excluded IS NOT NEW.excluded OR OLD.retro IS NOT NEW.retro OR OLD.reflectance_pct IS NOT NEW.reflectance_pct OR OLD.illuminance_klux IS NOT NEW.illuminance_klux OR OLD.reference_m IS NOT NEW.reference_m OR OLD.error_mm IS NOT NEW.error_mm OR OLD.reference_uncertainty_mm IS NOT NEW.reference_uncertainty_mm OR OLD.air_defaulted IS NOT NEW.air_defaulted
BEGIN
  UPDATE report_sums SET
    n = n - 1,
    s1 = s1 - (OLD.error_mm - k_e),
    s2 = s2 - (OLD.error_mm - k_e) * (OLD.error_mm - k_e),
    sq = sq - OLD.error_mm * OLD.error_mm,
    d1 = d1 - (OLD.reference_m - k_d),
    d2 = d2 - (OLD.reference_m - k_d) * (OLD.reference_m - k_d),
    de = de - (OLD.reference_m - k_d) * (OLD.error_mm - k_e),
    sum_d = sum_d - OLD.reference_m,
    sum_u2 = sum_u2 - CASE WHEN OLD.reference_uncertainty_mm >= 0 AND OLD.reference_uncertainty_mm <= 1.7976931348623157e308 THEN OLD.reference_uncertainty_mm * OLD.reference_uncertainty_mm ELSE 0 END,
    unknown_u = unknown_u - CASE WHEN OLD.reference_uncertainty_mm >= 0 AND OLD.reference_uncertainty_mm <= 1.7976931348623157e308 THEN 0 ELSE 1 END,
    sun = sun - CASE WHEN OLD.illuminance_klux >= 50 THEN 1 ELSE 0 END,
    air = air - CASE WHEN OLD.air_defaulted THEN 1 ELSE 0 END
  WHERE sensor_id = OLD.sensor_id AND session_id = OLD.session_id AND excl = CASE WHEN OLD.excluded THEN 1 ELSE 0 END AND rc = CASE WHEN OLD.retro THEN 3 WHEN OLD.reflectance_pct < 20 THEN 0 WHEN OLD.reflectance_pct <= 60 THEN 1 ELSE 2 END AND lb = CASE WHEN OLD.illuminance_klux IS NULL THEN -1 WHEN OLD.illuminance_klux < 10 THEN 0 WHEN OLD.illuminance_klux < 50 THEN 1 ELSE 2 END AND dbin = CAST(OLD.reference_m AS INTEGER);
  DELETE FROM report_sums WHERE sensor_id = OLD.sensor_id AND session_id = OLD.session_id AND excl = CASE WHEN OLD.excluded THEN 1 ELSE 0 END AND rc = CASE WHEN OLD.retro THEN 3 WHEN OLD.reflectance_pct < 20 THEN 0 WHEN OLD.reflectance_pct <= 60 THEN 1 ELSE 2 END AND lb = CASE WHEN OLD.illuminance_klux IS NULL THEN -1 WHEN OLD.illuminance_klux < 10 THEN 0 WHEN OLD.illuminance_klux < 50 THEN 1 ELSE 2 END AND dbin = CAST(OLD.reference_m AS INTEGER) AND n <= 0;
  INSERT INTO report_sums (sensor_id, session_id, excl, rc, lb, dbin, n, k_e, k_d, s1, s2, sq, d1, d2, de, sum_d, sum_u2, unknown_u, sun, air)
  VALUES (NEW.sensor_id, NEW.session_id, CASE WHEN NEW.excluded THEN 1 ELSE 0 END, CASE WHEN NEW.retro THEN 3 WHEN NEW.reflectance_pct < 20 THEN 0 WHEN NEW.reflectance_pct <= 60 THEN 1 ELSE 2 END, CASE WHEN NEW.illuminance_klux IS NULL THEN -1 WHEN NEW.illuminance_klux < 10 THEN 0 WHEN NEW.illuminance_klux < 50 THEN 1 ELSE 2 END, CAST(NEW.reference_m AS INTEGER), 1, NEW.error_mm, NEW.reference_m, 0, 0, NEW.error_mm * NEW.error_mm, 0, 0, 0, NEW.reference_m, CASE WHEN NEW.reference_uncertainty_mm >= 0 AND NEW.reference_uncertainty_mm <= 1.7976931348623157e308 THEN NEW.reference_uncertainty_mm * NEW.reference_uncertainty_mm ELSE 0 END, CASE WHEN NEW.reference_uncertainty_mm >= 0 AND NEW.reference_uncertainty_mm <= 1.7976931348623157e308 THEN 0 ELSE 1 END, CASE WHEN NEW.illuminance_klux >= 50 THEN 1 ELSE 0 END, CASE WHEN NEW.air_defaulted THEN 1 ELSE 0 END)
  ON CONFLICT (sensor_id, session_id, excl, rc, lb, dbin) DO UPDATE SET
    n = n + 1,
    s1 = s1 + (excluded.k_e - k_e),
    s2 = s2 + (excluded.k_e - k_e) * (excluded.k_e - k_e),
    sq = sq + excluded.sq,
    d1 = d1 + (excluded.k_d - k_d),
    d2 = d2 + (excluded.k_d - k_d) * (excluded.k_d - k_d),
    de = de + (excluded.k_d - k_d) * (excluded.k_e - k_e),
    sum_d = sum_d + excluded.sum_d,
    sum_u2 = sum_u2 + excluded.sum_u2,
    unknown_u = unknown_u + excluded.unknown_u,
    sun = sun + excluded.sun,
    air = air + excluded.air;
END;
--> statement-breakpoint
-- the shots already there, in rowid order (the order later inserts would have used)
INSERT INTO report_sums (sensor_id, session_id, excl, rc, lb, dbin, n, k_e, k_d, s1, s2, sq, d1, d2, de, sum_d, sum_u2, unknown_u, sun, air)
  SELECT s.sensor_id, s.session_id, CASE WHEN s.excluded THEN 1 ELSE 0 END, CASE WHEN s.retro THEN 3 WHEN s.reflectance_pct < 20 THEN 0 WHEN s.reflectance_pct <= 60 THEN 1 ELSE 2 END, CASE WHEN s.illuminance_klux IS NULL THEN -1 WHEN s.illuminance_klux < 10 THEN 0 WHEN s.illuminance_klux < 50 THEN 1 ELSE 2 END, CAST(s.reference_m AS INTEGER), 1, s.error_mm, s.reference_m, 0, 0, s.error_mm * s.error_mm, 0, 0, 0, s.reference_m, CASE WHEN s.reference_uncertainty_mm >= 0 AND s.reference_uncertainty_mm <= 1.7976931348623157e308 THEN s.reference_uncertainty_mm * s.reference_uncertainty_mm ELSE 0 END, CASE WHEN s.reference_uncertainty_mm >= 0 AND s.reference_uncertainty_mm <= 1.7976931348623157e308 THEN 0 ELSE 1 END, CASE WHEN s.illuminance_klux >= 50 THEN 1 ELSE 0 END, CASE WHEN s.air_defaulted THEN 1 ELSE 0 END FROM shots AS s WHERE true ORDER BY s.rowid
  ON CONFLICT (sensor_id, session_id, excl, rc, lb, dbin) DO UPDATE SET
    n = n + 1,
    s1 = s1 + (excluded.k_e - k_e),
    s2 = s2 + (excluded.k_e - k_e) * (excluded.k_e - k_e),
    sq = sq + excluded.sq,
    d1 = d1 + (excluded.k_d - k_d),
    d2 = d2 + (excluded.k_d - k_d) * (excluded.k_d - k_d),
    de = de + (excluded.k_d - k_d) * (excluded.k_e - k_e),
    sum_d = sum_d + excluded.sum_d,
    sum_u2 = sum_u2 + excluded.sum_u2,
    unknown_u = unknown_u + excluded.unknown_u,
    sun = sun + excluded.sun,
    air = air + excluded.air;
