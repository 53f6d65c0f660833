// Members of one campaign and, for its analysts and admins, the form to add someone by e-mail, a
// form per member to change the roles or remove the member, revoking open invitations and
// archiving the campaign. Server-rendered with the data in place; the add form goes through
// POST /api/campaigns/:id/members once hydrated; the others are plain forms posting to the page.
import { QueryClientProvider } from '@tanstack/react-query';
import { useState, type SubmitEvent } from 'react';
import type { AddMemberResult, CampaignOverview } from '../../contracts/api';
import { ApiError } from '../../browser/api';
import { useAddMember, useCampaignOverview } from '../../browser/campaigns';
import { getQueryClient } from '../../browser/query-client';
import { CAMPAIGN_ROLES, ROLE_DESCRIPTIONS, type CampaignRole } from '../../contracts/vocabulary';
import { RoleChips } from '../ui/RoleChips';
import { formatDate } from '../ui/formatDate';

interface Props {
  campaignId: string;
  initial: CampaignOverview;
  serverError?: { field?: string; message: string } | null;
  serverNotice?: string | null;
}

export default function CampaignMembers(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <Members {...props} />
    </QueryClientProvider>
  );
}

function Members({ campaignId, initial, serverError, serverNotice }: Props) {
  const overview = useCampaignOverview(campaignId, initial);
  const data = overview.data ?? initial;
  return (
    <div className="grid lg:grid-cols-[1fr_22rem] gap-8 items-start">
      <section className="card overflow-hidden" aria-labelledby="members-heading">
        <h2 id="members-heading" className="text-xl px-5 pt-5 pb-3">
          Members <span className="num text-base text-ink-500">({data.members.length})</span>
        </h2>
        <table className="w-full text-sm" data-testid="member-table">
          <thead className="bg-paper-deep text-ink-600 text-left">
            <tr>
              <th className="px-5 py-2 font-semibold">Name</th>
              <th className="px-3 py-2 font-semibold">E-mail</th>
              <th className="px-3 py-2 font-semibold">Roles</th>
              <th className="px-5 py-2 font-semibold text-right">Since</th>
              {data.canManageMembers && <th className="px-5 py-2 font-semibold">Change</th>}
            </tr>
          </thead>
          <tbody>
            {data.members.map((m) => (
              <tr key={m.userId} className="border-t border-rule">
                <td className="px-5 py-2.5">
                  {m.name}
                  {m.kind === 'guest' && <span className="ml-2 text-xs text-ink-500">guest</span>}
                </td>
                <td className="px-3 py-2.5 text-ink-600">{m.email}</td>
                <td className="px-3 py-2.5">
                  <RoleChips roles={m.roles} />
                </td>
                <td className="px-5 py-2.5 text-right num text-ink-500">{formatDate(m.addedAt)}</td>
                {data.canManageMembers && (
                  <td className="px-5 py-2.5">
                    <form method="post" className="flex flex-wrap items-center gap-2" aria-label={`Roles of ${m.name}`} data-testid={`member-form-${m.email}`}>
                      <input type="hidden" name="userId" value={m.userId} />
                      {CAMPAIGN_ROLES.map((r) => (
                        <label key={r} className="flex items-center gap-1 text-xs">
                          <input type="checkbox" name="roles" value={r} defaultChecked={m.roles.includes(r)} disabled={m.kind === 'guest' && r !== 'collaborator'} className="accent-ember-600" /> {r}
                        </label>
                      ))}
                      <button type="submit" name="action" value="member-roles" className="btn btn-quiet py-0.5 text-xs">Save roles</button>
                      <button type="submit" name="action" value="member-remove" className="btn btn-quiet py-0.5 text-xs">Remove</button>
                    </form>
                  </td>
                )}
              </tr>
            ))}
          </tbody>
        </table>
        {data.invitations.length > 0 && (
          <div className="border-t border-rule px-5 py-4">
            <h3 className="text-base mb-2">Invited, not signed up yet</h3>
            <ul className="text-sm flex flex-col gap-1" data-testid="invitation-list">
              {data.invitations.map((i) => (
                <li key={i.id} className="flex items-center gap-3">
                  <span className="text-ink-700">{i.email}</span>
                  <RoleChips roles={i.roles} />
                  <span className="text-ink-600 ml-auto">
                    link valid until <span className="num">{formatDate(i.expiresAt)}</span>
                  </span>
                  {data.canManageMembers && (
                    <form method="post">
                      <input type="hidden" name="invitationId" value={i.id} />
                      <button type="submit" name="action" value="invitation-revoke" className="btn btn-quiet py-0.5 text-xs" aria-label={`Revoke the invitation of ${i.email}`}>Revoke</button>
                    </form>
                  )}
                </li>
              ))}
            </ul>
          </div>
        )}
      </section>
      {data.canManageMembers && (
        <div className="flex flex-col gap-4">
          <AddMemberForm campaignId={campaignId} serverError={serverError} serverNotice={serverNotice} />
          <form method="post" className="card p-5 flex flex-col gap-2 text-sm" aria-labelledby="archive-heading">
            <h2 id="archive-heading" className="text-lg">{data.campaign.archivedAt ? 'Archived' : 'Archive the campaign'}</h2>
            <p className="text-ink-600">{data.campaign.archivedAt ? 'Restore it to import photometry and start batches again.' : 'Keeps every star, fit, review and release readable, lists the campaign apart and stops new imports and batches.'}</p>
            <button type="submit" name="action" value={data.campaign.archivedAt ? 'restore' : 'archive'} className="btn btn-quiet justify-center">{data.campaign.archivedAt ? 'Restore the campaign' : 'Archive the campaign'}</button>
          </form>
        </div>
      )}
    </div>
  );
}

function AddMemberForm({ campaignId, serverError, serverNotice }: { campaignId: string; serverError?: Props['serverError']; serverNotice?: string | null }) {
  const add = useAddMember(campaignId);
  const [email, setEmail] = useState('');
  const [roles, setRoles] = useState<CampaignRole[]>(['collaborator']);
  const [done, setDone] = useState<AddMemberResult | null>(null);
  const err = add.error instanceof ApiError ? add.error : add.error ? new ApiError(0, 'unknown', add.error.message) : null;
  const shown = err ? { field: err.field, message: err.message } : serverError ?? null;

  function toggle(role: CampaignRole, on: boolean) {
    setRoles((rs) => (on ? [...rs, role] : rs.filter((r) => r !== role)));
  }

  function onSubmit(e: SubmitEvent<HTMLFormElement>) {
    e.preventDefault();
    setDone(null);
    add.mutate(
      { email, roles },
      {
        onSuccess: (r) => {
          setDone(r);
          setEmail('');
        },
      },
    );
  }

  const fieldError = (f: string) => (shown?.field && shown.field.split('.')[0] === f ? shown.message : null);

  return (
    <form method="post" onSubmit={onSubmit} className="card p-5 flex flex-col gap-4" noValidate aria-labelledby="add-member-heading">
      <h2 id="add-member-heading" className="text-xl">
        Add someone
      </h2>
      <p className="text-sm text-ink-600 -mt-2">Someone without an account gets an invitation by e-mail.</p>
      {shown && !shown.field && (
        <p className="notice notice-error" role="alert">
          {shown.message}
        </p>
      )}
      {(done || (serverNotice && !shown)) && (
        <p className="notice notice-ok" role="status">
          {done
            ? done.outcome === 'added'
              ? `${done.member.name} is now a member.`
              : `Invitation sent to ${done.invitation.email}.`
            : serverNotice}
        </p>
      )}
      <div>
        <label className="field-label" htmlFor="member-email">
          E-mail
        </label>
        <input
          id="member-email"
          name="email"
          type="email"
          className="field-input"
          value={email}
          onChange={(e) => setEmail(e.target.value)}
          aria-invalid={!!fieldError('email') || undefined}
          required
        />
        {fieldError('email') && <p className="field-error" role="alert">{fieldError('email')}</p>}
      </div>
      <fieldset>
        <legend className="field-label">Roles</legend>
        <div className="flex flex-col gap-2">
          {CAMPAIGN_ROLES.map((r) => (
            <label key={r} className="flex items-start gap-2 text-sm">
              <input
                type="checkbox"
                name="roles"
                value={r}
                checked={roles.includes(r)}
                onChange={(e) => toggle(r, e.target.checked)}
                className="mt-1 accent-ember-600"
              />
              <span>
                <span className="font-semibold">{r}</span> <span className="text-ink-500">— {ROLE_DESCRIPTIONS[r]}</span>
              </span>
            </label>
          ))}
        </div>
        {fieldError('roles') && <p className="field-error" role="alert">{fieldError('roles')}</p>}
      </fieldset>
      <button type="submit" className="btn btn-primary justify-center" disabled={add.isPending}>
        {add.isPending ? 'Adding…' : 'Add to campaign'}
      </button>
    </form>
  );
}
