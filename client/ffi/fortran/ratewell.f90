! ratewell from Fortran: module `ratewell` over the C ABI (iso_c_binding). Handles are derived
! types; arrays are assumed-shape (contiguous); every procedure takes optional `stat` and
! `errmsg` arguments: with `stat` present a failure sets it to the RATEWELL_* status (and
! `errmsg` to the message), without it a failure prints the message and stops the program.
!
! Rate arrays are (temperatures, transitions): element (j, t) is transition t at temperature j,
! the same memory layout as the C ABI's transition-major arrays.
module ratewell
  use, intrinsic :: iso_c_binding
  implicit none
  private

  integer(c_int32_t), parameter, public :: RATEWELL_OK = 0, RATEWELL_INVALID_ARGUMENT = 1, &
       RATEWELL_OUT_OF_RANGE = 2, RATEWELL_NOT_FOUND = 3, RATEWELL_HASH_MISMATCH = 4, &
       RATEWELL_STAMP_MISMATCH = 5, RATEWELL_UNAVAILABLE = 6, RATEWELL_SERVER_ERROR = 7, &
       RATEWELL_TABLE_FILE = 8, RATEWELL_BUFFER_TOO_SMALL = 9, RATEWELL_INTERNAL = 10
  integer(c_int32_t), parameter, public :: RATEWELL_STAMP_ID = 0, RATEWELL_STAMP_VERSION = 1, &
       RATEWELL_STAMP_CONTENT_HASH = 2, RATEWELL_STAMP_TABLES_DIGEST = 3, &
       RATEWELL_STAMP_TABLE_SET_DIGEST = 4
  integer(c_int32_t), parameter, public :: RATEWELL_KELVIN = 1, RATEWELL_ELECTRON_VOLT = 2, &
       RATEWELL_CM3_PER_S = 1, RATEWELL_M3_PER_S = 2, RATEWELL_REFUSE = 0, RATEWELL_EXTRAPOLATE = 1

  !> A connection to one or more servers for one dataset.
  type, public :: ratewell_connection
     type(c_ptr) :: handle = c_null_ptr
  end type ratewell_connection

  !> An immutable table set of one species; evaluate from any number of threads at once.
  type, public :: ratewell_tables
     type(c_ptr) :: handle = c_null_ptr
  end type ratewell_tables

  public :: ratewell_open, ratewell_close, ratewell_fetch_tables, ratewell_table_count, &
       ratewell_transition, ratewell_stamp, ratewell_evaluate, ratewell_save, ratewell_load, &
       ratewell_free

  interface
     function c_open(endpoints, dataset_id, version, pinned_hash, budget, cache_dir, options, out) &
          bind(C, name="ratewell_open_with_options") result(status)
       import :: c_char, c_double, c_ptr, c_int32_t
       character(kind=c_char), dimension(*), intent(in) :: endpoints, dataset_id, version, &
            pinned_hash, cache_dir, options
       real(c_double), value :: budget
       type(c_ptr), intent(out) :: out
       integer(c_int32_t) :: status
     end function c_open
     subroutine c_close(connection) bind(C, name="ratewell_close")
       import :: c_ptr
       type(c_ptr), value :: connection
     end subroutine c_close
     function c_fetch(connection, species, out) bind(C, name="ratewell_fetch_tables") result(status)
       import :: c_char, c_ptr, c_int32_t
       type(c_ptr), value :: connection
       character(kind=c_char), dimension(*), intent(in) :: species
       type(c_ptr), intent(out) :: out
       integer(c_int32_t) :: status
     end function c_fetch
     function c_count(tables) bind(C, name="ratewell_tables_count") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: tables
       integer(c_size_t) :: n
     end function c_count
     function c_transition(tables, index, upper, lower) bind(C, name="ratewell_tables_transition") &
          result(status)
       import :: c_ptr, c_size_t, c_int32_t
       type(c_ptr), value :: tables
       integer(c_size_t), value :: index
       integer(c_int32_t), intent(out) :: upper, lower
       integer(c_int32_t) :: status
     end function c_transition
     function c_stamp(tables, field, buffer, length) bind(C, name="ratewell_tables_stamp") result(status)
       import :: c_ptr, c_char, c_size_t, c_int32_t
       type(c_ptr), value :: tables
       integer(c_int32_t), value :: field
       character(kind=c_char), dimension(*), intent(out) :: buffer
       integer(c_size_t), value :: length
       integer(c_int32_t) :: status
     end function c_stamp
     function c_evaluate(tables, uppers, lowers, n_transitions, temperatures, n_temperatures, &
          temperature_unit, rate_unit, outside, excitation, deexcitation, flags, n_out) &
          bind(C, name="ratewell_tables_evaluate") result(status)
       import :: c_ptr, c_size_t, c_int32_t, c_double
       type(c_ptr), value :: tables, uppers, lowers
       integer(c_size_t), value :: n_transitions, n_temperatures, n_out
       real(c_double), dimension(*), intent(in) :: temperatures
       integer(c_int32_t), value :: temperature_unit, rate_unit, outside
       type(c_ptr), value :: excitation, deexcitation, flags
       integer(c_int32_t) :: status
     end function c_evaluate
     function c_save(tables, dir, path, length) bind(C, name="ratewell_tables_save") result(status)
       import :: c_ptr, c_char, c_size_t, c_int32_t
       type(c_ptr), value :: tables
       character(kind=c_char), dimension(*), intent(in) :: dir
       character(kind=c_char), dimension(*), intent(out) :: path
       integer(c_size_t), value :: length
       integer(c_int32_t) :: status
     end function c_save
     function c_load(path, out) bind(C, name="ratewell_tables_load") result(status)
       import :: c_ptr, c_char, c_int32_t
       character(kind=c_char), dimension(*), intent(in) :: path
       type(c_ptr), intent(out) :: out
       integer(c_int32_t) :: status
     end function c_load
     subroutine c_free(tables) bind(C, name="ratewell_tables_free")
       import :: c_ptr
       type(c_ptr), value :: tables
     end subroutine c_free
     function c_last_error(buffer, length) bind(C, name="ratewell_last_error") result(n)
       import :: c_char, c_size_t
       character(kind=c_char), dimension(*), intent(out) :: buffer
       integer(c_size_t), value :: length
       integer(c_size_t) :: n
     end function c_last_error
  end interface

contains

  !> A Fortran string as a NUL-terminated C string.
  pure function c_string(text) result(c)
    character(len=*), intent(in) :: text
    character(kind=c_char, len=len_trim(text) + 1) :: c
    c = trim(text) // c_null_char
  end function c_string

  !> The NUL-terminated text in `buffer` as a Fortran string.
  function from_c(buffer) result(text)
    character(kind=c_char), dimension(:), intent(in) :: buffer
    character(len=:), allocatable :: text
    integer :: i, n
    n = 0
    do i = 1, size(buffer)
       if (buffer(i) == c_null_char) exit
       n = i
    end do
    allocate(character(len=n) :: text)
    do i = 1, n
       text(i:i) = buffer(i)
    end do
  end function from_c

  !> Reports `status` of call `what`: sets `stat`/`errmsg` when present, else stops with the message.
  subroutine report(status, what, stat, errmsg)
    integer(c_int32_t), intent(in) :: status
    character(len=*), intent(in) :: what
    integer, intent(out), optional :: stat
    character(len=*), intent(inout), optional :: errmsg
    character(kind=c_char), dimension(1024) :: buffer
    integer(c_size_t) :: n
    character(len=:), allocatable :: message
    if (present(stat)) stat = int(status)
    if (status == RATEWELL_OK) return
    n = c_last_error(buffer, int(size(buffer), c_size_t))
    message = what // ": " // from_c(buffer)
    if (present(errmsg)) errmsg = message
    if (.not. present(stat)) then
       write (*, '(a, i0, 2a)') 'ratewell error ', status, ': ', message
       error stop 1
    end if
  end subroutine report

  !> Opens a connection: `endpoints` comma-separated; optional dataset `version`,
  !> `pinned_hash`, `time_budget_s` (0: defaults), shared `cache_dir`, and `options`
  !> ("key=value;..." settings: token_file, tls_ca_file, wait_for_server_s, ...; see ratewell.h).
  subroutine ratewell_open(connection, endpoints, dataset_id, version, pinned_hash, time_budget_s, &
       cache_dir, options, stat, errmsg)
    type(ratewell_connection), intent(out) :: connection
    character(len=*), intent(in) :: endpoints, dataset_id
    character(len=*), intent(in), optional :: version, pinned_hash, cache_dir, options
    real(c_double), intent(in), optional :: time_budget_s
    integer, intent(out), optional :: stat
    character(len=*), intent(inout), optional :: errmsg
    character(len=:), allocatable :: v, p, d, o
    real(c_double) :: budget
    v = ''
    p = ''
    d = ''
    o = ''
    budget = 0.0_c_double
    if (present(version)) v = version
    if (present(pinned_hash)) p = pinned_hash
    if (present(cache_dir)) d = cache_dir
    if (present(options)) o = options
    if (present(time_budget_s)) budget = time_budget_s
    call report(c_open(c_string(endpoints), c_string(dataset_id), c_string(v), c_string(p), budget, &
         c_string(d), c_string(o), connection%handle), 'ratewell_open', stat, errmsg)
  end subroutine ratewell_open

  !> Closes a connection (fetched table sets stay valid).
  subroutine ratewell_close(connection)
    type(ratewell_connection), intent(inout) :: connection
    call c_close(connection%handle)
    connection%handle = c_null_ptr
  end subroutine ratewell_close

  !> Every rate table of `species` (fetched once per process).
  subroutine ratewell_fetch_tables(connection, species, tables, stat, errmsg)
    type(ratewell_connection), intent(in) :: connection
    character(len=*), intent(in) :: species
    type(ratewell_tables), intent(out) :: tables
    integer, intent(out), optional :: stat
    character(len=*), intent(inout), optional :: errmsg
    call report(c_fetch(connection%handle, c_string(species), tables%handle), &
         'ratewell_fetch_tables', stat, errmsg)
  end subroutine ratewell_fetch_tables

  !> Number of tables (transitions) in the set.
  integer function ratewell_table_count(tables)
    type(ratewell_tables), intent(in) :: tables
    ratewell_table_count = int(c_count(tables%handle))
  end function ratewell_table_count

  !> The (upper, lower) levels of table `index` (1-based, in the server's order).
  subroutine ratewell_transition(tables, index, upper, lower, stat, errmsg)
    type(ratewell_tables), intent(in) :: tables
    integer, intent(in) :: index
    integer, intent(out) :: upper, lower
    integer, intent(out), optional :: stat
    character(len=*), intent(inout), optional :: errmsg
    integer(c_int32_t) :: u, l
    u = 0
    l = 0
    call report(c_transition(tables%handle, int(index - 1, c_size_t), u, l), 'ratewell_transition', &
         stat, errmsg)
    upper = int(u)
    lower = int(l)
  end subroutine ratewell_transition

  !> One stamp field (RATEWELL_STAMP_*) of the set.
  function ratewell_stamp(tables, field, stat, errmsg) result(text)
    type(ratewell_tables), intent(in) :: tables
    integer(c_int32_t), intent(in) :: field
    integer, intent(out), optional :: stat
    character(len=*), intent(inout), optional :: errmsg
    character(len=:), allocatable :: text
    character(kind=c_char), dimension(256) :: buffer
    buffer = c_null_char
    call report(c_stamp(tables%handle, field, buffer, int(size(buffer), c_size_t)), 'ratewell_stamp', &
         stat, errmsg)
    text = from_c(buffer)
  end function ratewell_stamp

  !> Rate coefficients with the server's rule. `temperatures(:)`; outputs of shape
  !> (size(temperatures), transitions); `uppers`/`lowers` choose transitions (absent: all).
  !> Units: `temperature_unit` RATEWELL_KELVIN (default) or RATEWELL_ELECTRON_VOLT,
  !> `rate_unit` RATEWELL_CM3_PER_S (default) or RATEWELL_M3_PER_S; `outside`
  !> RATEWELL_REFUSE (default) or RATEWELL_EXTRAPOLATE.
  subroutine ratewell_evaluate(tables, temperatures, excitation, deexcitation, flags, uppers, lowers, &
       temperature_unit, rate_unit, outside, stat, errmsg)
    type(ratewell_tables), intent(in) :: tables
    real(c_double), dimension(:), intent(in), contiguous :: temperatures
    real(c_double), dimension(:, :), intent(out), contiguous, target :: excitation, deexcitation
    integer(c_int32_t), dimension(:, :), intent(out), contiguous, target :: flags
    integer(c_int32_t), dimension(:), intent(in), optional, target :: uppers, lowers
    integer(c_int32_t), intent(in), optional :: temperature_unit, rate_unit, outside
    integer, intent(out), optional :: stat
    character(len=*), intent(inout), optional :: errmsg
    integer(c_int32_t) :: tu, ru, op, status
    type(c_ptr) :: pu, pl
    integer(c_size_t) :: nt
    tu = RATEWELL_KELVIN
    ru = RATEWELL_CM3_PER_S
    op = RATEWELL_REFUSE
    if (present(temperature_unit)) tu = temperature_unit
    if (present(rate_unit)) ru = rate_unit
    if (present(outside)) op = outside
    pu = c_null_ptr
    pl = c_null_ptr
    nt = 0
    if (present(uppers) .neqv. present(lowers)) then
       status = RATEWELL_INVALID_ARGUMENT
       if (present(stat)) stat = int(status)
       if (present(errmsg)) errmsg = 'ratewell_evaluate: uppers and lowers must be given together'
       if (.not. present(stat)) error stop 'ratewell_evaluate: uppers and lowers must be given together'
       return
    end if
    if (present(uppers)) then
       if (size(uppers) /= size(lowers)) then
          if (present(stat)) stat = int(RATEWELL_INVALID_ARGUMENT)
          if (present(errmsg)) errmsg = 'ratewell_evaluate: uppers and lowers must have equal sizes'
          if (.not. present(stat)) error stop 'ratewell_evaluate: uppers and lowers must have equal sizes'
          return
       end if
       nt = int(size(uppers), c_size_t)
       if (nt > 0) then
          pu = c_loc(uppers)
          pl = c_loc(lowers)
       end if
    end if
    if (size(excitation) /= size(flags) .or. size(deexcitation) /= size(flags)) then
       if (present(stat)) stat = int(RATEWELL_INVALID_ARGUMENT)
       if (present(errmsg)) errmsg = 'ratewell_evaluate: excitation, deexcitation and flags must have equal sizes'
       if (.not. present(stat)) error stop 'ratewell_evaluate: output arrays of different sizes'
       return
    end if
    status = c_evaluate(tables%handle, pu, pl, nt, temperatures, int(size(temperatures), c_size_t), &
         tu, ru, op, c_loc(excitation), c_loc(deexcitation), c_loc(flags), int(size(flags), c_size_t))
    call report(status, 'ratewell_evaluate', stat, errmsg)
  end subroutine ratewell_evaluate

  !> Saves a table file into folder `dir`; `path` receives its path.
  subroutine ratewell_save(tables, dir, path, stat, errmsg)
    type(ratewell_tables), intent(in) :: tables
    character(len=*), intent(in) :: dir
    character(len=:), allocatable, intent(out) :: path
    integer, intent(out), optional :: stat
    character(len=*), intent(inout), optional :: errmsg
    character(kind=c_char), dimension(4096) :: buffer
    buffer = c_null_char
    call report(c_save(tables%handle, c_string(dir), buffer, int(size(buffer), c_size_t)), &
         'ratewell_save', stat, errmsg)
    path = from_c(buffer)
  end subroutine ratewell_save

  !> Loads a table file with no server (checksum and digest verified).
  subroutine ratewell_load(path, tables, stat, errmsg)
    character(len=*), intent(in) :: path
    type(ratewell_tables), intent(out) :: tables
    integer, intent(out), optional :: stat
    character(len=*), intent(inout), optional :: errmsg
    call report(c_load(c_string(path), tables%handle), 'ratewell_load', stat, errmsg)
  end subroutine ratewell_load

  !> Frees a table set.
  subroutine ratewell_free(tables)
    type(ratewell_tables), intent(inout) :: tables
    call c_free(tables%handle)
    tables%handle = c_null_ptr
  end subroutine ratewell_free

end module ratewell
