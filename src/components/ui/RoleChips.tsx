import type { CampaignRole } from '../../contracts/vocabulary';

export function RoleChips({ roles }: { roles: CampaignRole[] }) {
  return (
    <span className="inline-flex flex-wrap gap-1">
      {roles.map((r) => (
        <span key={r} className={`role-chip role-${r}`}>
          {r}
        </span>
      ))}
    </span>
  );
}
