import { Link } from "react-router";
import { formatWhen } from "./chrome";
import { contextOf, type SessionData } from "./session-data";

export function SessionMissing() {
  return (
    <div className="card space-y-3" role="alert">
      <h1 className="text-2xl font-bold">No such session on this tablet</h1>
      <p>Sessions live on the tablet that started them. Start a new one, or pick one from the list.</p>
      <Link to="/field" className="btn">
        Go to the sessions
      </Link>
    </div>
  );
}

export function SessionHeader({ data }: { data: SessionData }) {
  const s = data.session!;
  const ctx = contextOf(s, data.reference);
  return (
    <div className="space-y-1">
      <h1 className="text-3xl font-bold">
        {ctx.sensor?.label ?? s.record.sensorId} at {ctx.site?.name ?? s.record.siteId}
      </h1>
      <p className="num text-muted">
        Started {formatWhen(s.record.startedAt)} · air {s.record.airTempC ?? "20 (assumed)"} °C, {s.record.pressureHpa ?? "1013.25 (assumed)"} hPa, {s.record.humidityPct ?? "50 (assumed)"} % ·{" "}
        {ctx.project ? `project ${ctx.project.name}` : "default acceptance rule"}
        {s.state === "rejected" ? " · the server refused this session: see the outbox" : ""}
      </p>
    </div>
  );
}
