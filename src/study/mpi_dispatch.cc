// SPDX-License-Identifier: Apache-2.0
// StudyMessenger over MPI_COMM_WORLD (built only with RECOFOLD_WITH_MPI).
#include "recofold/study/mpi_dispatch.h"

// The C interface only (Open MPI and MPICH would add their C++ bindings).
#define OMPI_SKIP_MPICXX 1
#define MPICH_SKIP_MPICXX 1
#include <mpi.h>

#include <vector>

#include "recofold/core/error.h"

namespace recofold {

namespace {

bool g_started = false;

class WorldMessenger : public StudyMessenger {
 public:
  WorldMessenger() {
    MPI_Comm_rank(MPI_COMM_WORLD, &rank_);
    MPI_Comm_size(MPI_COMM_WORLD, &size_);
    MPI_Comm local;
    if (MPI_Comm_split_type(MPI_COMM_WORLD, MPI_COMM_TYPE_SHARED, 0, MPI_INFO_NULL, &local) == MPI_SUCCESS) {
      MPI_Comm_size(local, &on_host_);
      MPI_Comm_free(&local);
    }
  }
  int rank() const override { return rank_; }
  int size() const override { return size_; }
  int ranks_on_host() const override { return on_host_; }

  void send(int to, int tag, const std::string& text) override {
    if (MPI_Send(text.data(), int(text.size()), MPI_CHAR, to, tag, MPI_COMM_WORLD) != MPI_SUCCESS)
      throw WorkError("MPI: sending to rank " + std::to_string(to) + " failed");
  }

  bool poll(int from, Message& out) override {
    int flag = 0;
    MPI_Status st;
    MPI_Iprobe(from < 0 ? MPI_ANY_SOURCE : from, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &st);
    if (!flag) return false;
    int n = 0;
    MPI_Get_count(&st, MPI_CHAR, &n);
    std::vector<char> buf(size_t(n > 0 ? n : 1));
    if (MPI_Recv(buf.data(), n, MPI_CHAR, st.MPI_SOURCE, st.MPI_TAG, MPI_COMM_WORLD, MPI_STATUS_IGNORE) !=
        MPI_SUCCESS)
      throw WorkError("MPI: receiving from rank " + std::to_string(st.MPI_SOURCE) + " failed");
    out.from = st.MPI_SOURCE;
    out.tag = st.MPI_TAG;
    out.text.assign(buf.data(), size_t(n));
    return true;
  }

 private:
  int rank_ = 0, size_ = 1, on_host_ = 1;
};

}  // namespace

bool mpi_built() { return true; }

bool mpi_start(int* argc, char*** argv) {
  if (g_started) return true;
  int provided = 0;
  if (MPI_Init_thread(argc, argv, MPI_THREAD_FUNNELED, &provided) != MPI_SUCCESS) return false;
  g_started = true;
  mpi_world();  // collective (the per-host split): made here, where every rank passes
  return true;
}

void mpi_stop() {
  if (!g_started) return;
  MPI_Finalize();
  g_started = false;
}

void mpi_abort(int code) {
  if (g_started) MPI_Abort(MPI_COMM_WORLD, code);
}

StudyMessenger* mpi_world() {
  if (!g_started) return nullptr;
  static WorldMessenger world;
  return &world;
}

}  // namespace recofold
