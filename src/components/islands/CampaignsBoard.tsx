// The campaign list and the "new campaign" form. Rendered on the server with the list already in
// place (so it reads without JavaScript); once hydrated it keeps the list fresh through
// GET /api/campaigns and creates through POST /api/campaigns. Without JavaScript the form still
// posts to the page, which creates the campaign on the server.
import { QueryClientProvider } from '@tanstack/react-query';
import { useState, type SubmitEvent } from 'react';
import type { CampaignSummary } from '../../contracts/api';
import { ApiError } from '../../browser/api';
import { useCampaigns, useCreateCampaign } from '../../browser/campaigns';
import { getQueryClient } from '../../browser/query-client';
import { RoleChips } from '../ui/RoleChips';
import { formatDate } from '../ui/formatDate';

interface Props {
  initialCampaigns: CampaignSummary[];
  canCreate: boolean;
  serverError?: { field?: string; message: string } | null;
  serverValues?: { name: string; description: string };
}

export default function CampaignsBoard(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <Board {...props} />
    </QueryClientProvider>
  );
}

function Board({ initialCampaigns, canCreate, serverError, serverValues }: Props) {
  const campaigns = useCampaigns(initialCampaigns);
  const list = campaigns.data ?? [];
  return (
    <div className="grid lg:grid-cols-[1fr_22rem] gap-8 items-start">
      <section aria-labelledby="campaigns-heading">
        <h2 id="campaigns-heading" className="sr-only">
          Your campaigns
        </h2>
        {campaigns.error && (
          <p className="notice notice-error mb-4" role="alert">
            {campaigns.error.message}
          </p>
        )}
        {list.length === 0 ? (
          <div className="card p-8 text-ink-600">
            <p className="font-display text-xl text-ink-800 mb-2">No campaigns yet</p>
            <p>{canCreate ? 'Start one with the form: you become its analyst.' : 'When a team member invites you to a campaign, it appears here.'}</p>
          </div>
        ) : (
          <ul className="flex flex-col gap-3" data-testid="campaign-list">
            {[...list.filter((c) => !c.archivedAt), ...list.filter((c) => c.archivedAt)].map((c) => (
              <li key={c.id} className={`card p-5 hover:border-ember-400 transition-colors ${c.archivedAt ? 'border-dashed' : ''}`} data-archived={c.archivedAt ? 'true' : 'false'}>
                <div className="flex items-baseline justify-between gap-4">
                  <a href={`/campaigns/${c.id}`} className="font-display text-xl text-ink-900 no-underline hover:text-ember-700">
                    {c.name}
                  </a>
                  <span className="flex gap-2 items-center">
                    {c.archivedAt && <span className="role-chip bg-paper-deep text-ink-700">archived</span>}
                    <RoleChips roles={c.myRoles} />
                  </span>
                </div>
                {c.description && <p className="text-ink-600 mt-1 line-clamp-2">{c.description}</p>}
                <p className="text-sm text-ink-500 mt-2">
                  <span className="num">{c.memberCount}</span> {c.memberCount === 1 ? 'member' : 'members'} · started{' '}
                  <span className="num">{formatDate(c.createdAt)}</span>
                </p>
              </li>
            ))}
          </ul>
        )}
      </section>
      {canCreate ? (
        <CreateCampaignForm serverError={serverError} serverValues={serverValues} />
      ) : (
        <aside className="card p-5 text-sm text-ink-600">
          <p className="font-semibold text-ink-800 mb-1">Guest account</p>
          <p>Guests take part in campaigns they are invited to and cannot start new ones.</p>
        </aside>
      )}
    </div>
  );
}

function CreateCampaignForm({ serverError, serverValues }: Pick<Props, 'serverError' | 'serverValues'>) {
  const create = useCreateCampaign();
  const [name, setName] = useState(serverValues?.name ?? '');
  const [description, setDescription] = useState(serverValues?.description ?? '');
  const [created, setCreated] = useState<CampaignSummary | null>(null);
  const err = create.error instanceof ApiError ? create.error : create.error ? new ApiError(0, 'unknown', create.error.message) : null;
  const shown = err ? { field: err.field, message: err.message } : serverError ?? null;

  function onSubmit(e: SubmitEvent<HTMLFormElement>) {
    e.preventDefault();
    setCreated(null);
    create.mutate(
      { name, description },
      {
        onSuccess: (c) => {
          setCreated(c);
          setName('');
          setDescription('');
        },
      },
    );
  }

  return (
    <form method="post" action="/campaigns" onSubmit={onSubmit} className="card p-5 flex flex-col gap-4" noValidate aria-labelledby="new-campaign-heading">
      <h2 id="new-campaign-heading" className="text-xl">
        New campaign
      </h2>
      {shown && !shown.field && (
        <p className="notice notice-error" role="alert">
          {shown.message}
        </p>
      )}
      {created && (
        <p className="notice notice-ok" role="status">
          Created <a href={`/campaigns/${created.id}`}>{created.name}</a>. You are its analyst.
        </p>
      )}
      <div>
        <label className="field-label" htmlFor="campaign-name">
          Name
        </label>
        <input
          id="campaign-name"
          name="name"
          className="field-input"
          value={name}
          onChange={(e) => setName(e.target.value)}
          aria-invalid={shown?.field === 'name' || undefined}
          aria-describedby={shown?.field === 'name' ? 'campaign-name-error' : undefined}
          required
        />
        {shown?.field === 'name' && (
          <p className="field-error" id="campaign-name-error" role="alert">
            {shown.message}
          </p>
        )}
      </div>
      <div>
        <label className="field-label" htmlFor="campaign-description">
          Description <span className="font-normal text-ink-500">(optional)</span>
        </label>
        <textarea
          id="campaign-description"
          name="description"
          rows={3}
          className="field-input"
          value={description}
          onChange={(e) => setDescription(e.target.value)}
          aria-invalid={shown?.field === 'description' || undefined}
        />
        {shown?.field === 'description' && <p className="field-error">{shown.message}</p>}
      </div>
      <button type="submit" className="btn btn-primary justify-center" disabled={create.isPending}>
        {create.isPending ? 'Creating…' : 'Create campaign'}
      </button>
    </form>
  );
}
