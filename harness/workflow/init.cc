#include "harness/workflow/init.h"

#include <sys/stat.h>

#include <cstdlib>
#include <cstring>

#include "harness/ledger/entries.h"
#include "storage/ledger.h"
#include "storage/seal_crypto.h"

namespace unseen {

Result<InitReport> InitLedger(const InitRequest& request) {
  struct stat st;
  if (::stat(request.ledger_path.c_str(), &st) == 0) {
    return Status::AlreadyExists(request.ledger_path +
                                 ": a ledger (or another file) already exists here; refusing to "
                                 "overwrite it");
  }
  UNSEEN_ASSIGN_OR_RETURN(SourceScan scan, ScanSource(request.data_path, request.scan));

  UNSEEN_ASSIGN_OR_RETURN(std::string id, RandomBytes(16));
  GenesisBody genesis;
  genesis.ledger_id = ToHex(id.data(), id.size());
  genesis.row_digest_format = scan.info.row_digest_format;
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, CreateLedger(request.ledger_path, request.actor, genesis));
  // Only the Merkle root commits to the rows: no per-row digest and no figure over rows is
  // stored before the seal (docs/row-digests.md).
  SourceBody source;
  source.source = scan.info;
  source.source.target = TargetSummary();
  for (ColumnInfo& c : source.source.columns) c.missing = 0;
  if (char* abs = ::realpath(request.data_path.c_str(), nullptr)) {
    source.absolute_path = std::string(abs);
    std::free(abs);
  }
  UNSEEN_ASSIGN_OR_RETURN(Entry entry, AppendEntry(ledger.get(), request.actor, source));
  UNSEEN_RETURN_IF_ERROR(ledger->Commit());
  InitReport report;
  report.source = std::move(source.source);
  report.head = entry.hash;
  if (::stat(request.ledger_path.c_str(), &st) == 0) report.ledger_bytes = st.st_size;
  return report;
}

}  // namespace unseen
