// SPDX-License-Identifier: Apache-2.0
// Message passing between the processes of a study started by an MPI launcher
// (mpirun, srun): the small interface the study runner's work queue uses.
//
// Built with MPI (CMake option RECOFOLD_WITH_MPI) the functions below talk to
// MPI_COMM_WORLD (src/study/mpi_dispatch.cc); without it mpi_built() is false,
// mpi_start() does nothing and mpi_world() is null. Only the program's main()
// starts and stops MPI, and only when the launcher announced more than one
// process (mpi_launch_size), so plain runs never touch MPI.
//
// Library code: nothing here prints or exits.
#pragma once

#include <stdexcept>
#include <string>

namespace recofold {

// Point-to-point text messages between the ranks of one job.
class StudyMessenger {
 public:
  struct Message {
    int from = -1;
    int tag = 0;
    std::string text;
  };
  virtual ~StudyMessenger() = default;
  virtual int rank() const = 0;
  virtual int size() const = 0;
  // Ranks of the job on this host (for threads per rank).
  virtual int ranks_on_host() const = 0;
  virtual void send(int to, int tag, const std::string& text) = 0;
  // Takes a waiting message from rank `from` (-1: any rank) without blocking;
  // false when there is none.
  virtual bool poll(int from, Message& out) = 0;
  // Waits (sleeping between polls, so an idle rank does not spin a core) for
  // the next message from rank `from`.
  Message wait(int from);

  // Set by rank 0 while other ranks work on its tasks: a failure then must
  // end the whole job (mpi_abort), as they would wait for rank 0 forever.
  bool workers_active = false;
};

// Thrown on a rank other than 0 when rank 0 refused or stopped the study and
// reported why itself: the process should exit with `exit_code` silently.
class ReportedByRankZero : public std::runtime_error {
 public:
  ReportedByRankZero(int exit_code, const std::string& what) : std::runtime_error(what), exit_code_(exit_code) {}
  int exit_code() const { return exit_code_; }

 private:
  int exit_code_;
};

// Processes announced by the launcher's environment (OMPI_COMM_WORLD_SIZE of
// Open MPI, PMI_SIZE of MPICH/Hydra and Slurm's PMI); 1 when neither is set.
int mpi_launch_size();

// True when this build has MPI support.
bool mpi_built();

// MPI_Init (threads: only the calling thread talks to MPI); true when MPI was
// started. Without MPI support: false.
bool mpi_start(int* argc, char*** argv);

// MPI_Finalize when mpi_start started MPI.
void mpi_stop();

// Ends every process of the job with `code` (MPI_Abort); without MPI (or
// before mpi_start) it returns and the caller exits as usual.
void mpi_abort(int code);

// The world communicator once mpi_start succeeded, else null.
StudyMessenger* mpi_world();

}  // namespace recofold
